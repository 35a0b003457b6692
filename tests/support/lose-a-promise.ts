/**
 * Loaded into a `plumbline serve` process by a test (`node --import`): on SIGUSR2 it leaves a
 * rejected promise that nothing handles, as a forgotten background task in the service would.
 * Not part of Plumbline; the service code is not changed for the test.
 */
process.on('SIGUSR2', () => {
  void Promise.reject(new Error('a background task nobody awaited failed'));
});
