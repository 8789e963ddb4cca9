/**
 * The app's engine operations: every computing operation of ./handler.ts plus the two that read files
 * (io/intake.ts, with proj4 and papaparse): the samples-file reader and the report's preparation from a
 * project (./report-data.ts), which the app's worker runs off the main thread. Kept out of handler.ts
 * so that the command line's engine threads, which never read files, do not load them.
 */
import { readSamples } from '../io/intake.ts';
import { COMPUTE_OPERATIONS, type EngineOperations } from './handler.ts';
import { prepareReport } from './report-data.ts';

export const ENGINE_OPERATIONS: EngineOperations = { ...COMPUTE_OPERATIONS, readSamples, prepareReport };
