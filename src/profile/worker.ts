/**
 * Worker thread entry: profiles a day's numeric features, taking them one at a time from the
 * counter it shares with the other threads (claim.ts). The columns arrive
 * as typed arrays over SharedArrayBuffers (no copy) and are sorted in place into the
 * profiles' sorted samples, which go back over the same shared memory.
 */
import { parentPort } from 'node:worker_threads';
import { profileClaimed, type ProfileRequest } from './claim.ts';

parentPort?.on('message', (req: ProfileRequest) => {
  try {
    const profiles = profileClaimed(req);
    // A column on an ordinary buffer (not shared) is handed back rather than copied.
    const owned = profiles.map(([, p]) => p.sortedSample.buffer).filter((b): b is ArrayBuffer => b instanceof ArrayBuffer);
    parentPort!.postMessage({ ok: true, profiles }, [...new Set(owned)]);
  } catch (err) {
    parentPort!.postMessage({ ok: false, error: err instanceof Error ? err.message : String(err) });
  }
});
