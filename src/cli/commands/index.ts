/**
 * The commands the tool knows, in the order `gapwise --help` lists them. A new command is one file
 * in this folder exporting a CommandSpec, added here (and removed from PLANNED).
 */
import { withQuiet, type CommandSpec } from '../common.ts';
import { inspectCommand } from './inspect.ts';
import { fitCommand } from './fit.ts';
import { predictCommand } from './predict.ts';
import { cvCommand } from './cv.ts';
import { gridCommand } from './grid.ts';
import { reportCommand } from './report.ts';
import { withProject } from '../project-options.ts';
import { suggestCommand } from './suggest.ts';
import { simulateCommand } from './simulate.ts';
import { appCommand } from './app.ts';

export const COMMANDS: readonly CommandSpec[] = [
  ...[inspectCommand, fitCommand, predictCommand, cvCommand, gridCommand, suggestCommand, simulateCommand, reportCommand].map(withProject),
  appCommand, // serves the built app: no samples, so no --project
].map(withQuiet);

/** Commands of the design that are not built yet; running one says so (exit 2). */
export const PLANNED: readonly string[] = [];
