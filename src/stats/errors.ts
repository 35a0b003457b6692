/**
 * The error every function of the statistics unit throws on invalid input.
 *
 * Statistics never return NaN silently: an empty sample, a negative count or an unsorted
 * "sorted" input is a caller bug or bad data, and the message names the function and the
 * problem (for example "ks2Sorted requires at least one value in each sample"). Callers
 * that want the project's `DataError` wrap it with `{ cause }`; this unit imports nothing
 * from outside its folder.
 */
export class StatsInputError extends Error {
  override readonly name = 'StatsInputError';
  constructor(message: string) {
    super(message);
  }
}
