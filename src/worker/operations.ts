/**
 * The app's engine operations: every computing operation of ./handler.ts plus the samples-file reader
 * (io/intake.ts, with proj4 and papaparse), which the app's worker runs off the main thread. Kept out
 * of handler.ts so that the command line's engine threads, which never read files, do not load it.
 */
import { readSamples } from '../io/intake.ts';
import { COMPUTE_OPERATIONS, type EngineOperations } from './handler.ts';

export const ENGINE_OPERATIONS: EngineOperations = { ...COMPUTE_OPERATIONS, readSamples };
