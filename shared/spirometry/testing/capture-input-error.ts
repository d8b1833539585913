import { SpirometryInputError } from '../model.js';

/** Runs `run` and returns the input error it throws; any other outcome fails the calling test. */
export function captureInputError(run: () => unknown): SpirometryInputError {
  try {
    run();
  } catch (error) {
    if (error instanceof SpirometryInputError) return error;
    throw error;
  }
  throw new Error('expected a SpirometryInputError');
}
