import { GapwiseError } from '../../src/core/shared/errors.ts';

/** The GapwiseError `f` throws; any other error is thrown on, and no error at all fails the test. */
export function thrown(f: () => unknown): GapwiseError {
  try {
    f();
  } catch (e) {
    if (e instanceof GapwiseError) return e;
    throw e;
  }
  throw new Error('expected a GapwiseError');
}
