/**
 * `--project FILE` on every command: a saved Gapwise project stands in for the options it holds.
 *
 * `withProject(command)` adds the option and, when it is given, opens the project (checked and
 * migrated by io/project.ts) and fills in what the command takes and the command line did not say:
 * --samples (the stored file text, read from memory with the stored reading options), --model (the
 * stored model with its working CRS), --threshold, --boundary (when the grid uses it), --cell, the
 * fitting choices for `fit`, and the stored suggestion options. Options given explicitly win.
 * Options that were required (--samples, --model) become "required unless --project gives them".
 */
import { GapwiseError } from '../core/shared/errors.ts';
import type { CovarianceModel, Family } from '../core/covariance/model.ts';
import { isCovariateTrend } from '../core/covariance/model.ts';
import { openProject, projectIntake, type OpenedProject, type Project } from '../io/project.ts';
import type { OptionSpec } from './args.ts';
import { stringOption } from './args.ts';
import { printWarnings, readText, type CliIo, type CommandSpec, type OptionValues } from './common.ts';

/** The option itself, as every command lists it. */
const PROJECT_OPTION: OptionSpec = {
  name: 'project',
  kind: 'string',
  placeholder: 'FILE',
  help: 'a saved Gapwise project (.json): the samples as read, the reading options, the model, the grid and the threshold come from it; options given here win',
  defaultText: 'none',
};

/** Options a project can stand in for when they are required. */
const SUPPLIED = new Set(['samples', 'model']);

/** Reads and checks a project file; problems name the file (exit 2), warnings go to stderr. */
export function readProjectFile(io: CliIo, file: string): OpenedProject {
  const opened = openProject(readText(io, file), file);
  printWarnings(io, opened.warnings);
  return opened;
}

/** The working CRS the project's numbers are in (its samples read as the app reads them). */
function projectWorkCrs(project: Project): string {
  return project.samples.intake.workCrs ?? projectIntake(project).report.crs.work;
}

function kebab(name: string): string {
  return name.replace(/[A-Z]/g, (c) => `-${c.toLowerCase()}`);
}

/** Fitting choices of the project's model as `fit` options (family, nu, method, trend, transform). */
function fitValues(project: Project, model: CovarianceModel): OptionValues {
  // 'auto' is REML below the exact limit and the nearest-neighbour likelihood above it, as in the app.
  const method = project.structure.method === 'reml' ? 'auto' : project.structure.method;
  const out: OptionValues = { method, transform: project.structure.transform };
  const corr = model.structures.find((s) => s.type !== 'nugget') as { type: Family; nu?: number } | undefined;
  if (corr) {
    out.family = corr.type;
    if (corr.type === 'matern') out.nu = project.structure.chosen === 'matern-free' ? 'free' : String(corr.nu ?? 1.5);
  }
  if (isCovariateTrend(model.trend)) {
    out.trend = model.trend.coordinates ? 'linear' : 'constant';
    out.covariates = model.trend.covariates.join(',');
    const levels = model.trend.levels ?? {};
    const categorical = Object.keys(levels).filter((name) => levels[name].every((l) => Number.isFinite(Number(l))));
    if (categorical.length > 0) out.categorical = categorical.join(',');
  } else out.trend = typeof model.trend === 'object' ? `known:${model.trend.known}` : model.trend;
  return out;
}

/**
 * The values and I/O a command runs with under `--project FILE`: the project's values for the
 * options the command has and the command line left out, and the project's texts in memory.
 */
function projectRouting(command: CommandSpec, values: OptionValues, io: CliIo, file: string): { values: OptionValues; io: CliIo; project: Project } {
  const { project } = readProjectFile(io, file);
  const has = (name: string) => command.options.some((o) => o.name === name) && values[name] === undefined;
  const kind = (name: string) => command.options.find((o) => o.name === name)?.kind;
  const filled: OptionValues = {};
  const files: Record<string, string> = { ...(io.files ?? {}) };
  let intakeDefaults = io.intakeDefaults;
  if (has('samples')) {
    const key = `${file}:${project.samples.fileName}`;
    files[key] = project.samples.text;
    filled.samples = key;
    intakeDefaults = { ...project.samples.intake };
  }
  if (project.model) {
    if (has('model')) {
      const key = `${file}:model`;
      files[key] = JSON.stringify({ ...project.model, crs: { work: projectWorkCrs(project) } });
      filled.model = key;
    }
    if (command.name === 'fit') {
      for (const [k, v] of Object.entries(fitValues(project, project.model))) if (has(k)) filled[k] = v;
    }
  }
  if (has('threshold') && project.threshold !== null) filled.threshold = project.threshold;
  if (has('boundary') && project.boundary && project.grid.area === 'boundary') {
    const key = `${file}:${project.boundary.fileName}`;
    files[key] = project.boundary.text;
    filled.boundary = key;
  }
  if (has('cell') && project.grid.geometry) filled.cell = project.grid.geometry.cell;
  for (const [k, v] of Object.entries(project.suggestOptions ?? {})) {
    const name = kebab(k);
    if (name === 'project' || filled[name] !== undefined || !has(name)) continue;
    if ((typeof v === 'number' && kind(name) === 'number') || (typeof v === 'string' && kind(name) === 'string')
      || (typeof v === 'boolean' && kind(name) === 'boolean')) filled[name] = v;
  }
  return { values: { ...filled, ...values }, io: { ...io, files, intakeDefaults }, project };
}

/**
 * An error about a text the project holds (its samples, model or boundary, read from memory under
 * "FILE:name") names the project file and the field instead: `site.json, field "samples.text" (the
 * samples "lead-topsoil.csv" it holds), line 12: ...`. A missing column that a reading option of the
 * project named is the field of that option (`samples.intake.value`).
 */
function nameProjectField(e: GapwiseError, file: string, project: Project, values: OptionValues): void {
  const held = e.place.file;
  if (held === undefined || !held.startsWith(`${file}:`)) return;
  if (held === `${file}:model`) {
    e.place.file = `${file}, field "model"`;
    return;
  }
  if (project.boundary && held === `${file}:${project.boundary.fileName}`) {
    e.place.file = `${file}, field "boundary.text" (the boundary "${project.boundary.fileName}" it holds)`;
    return;
  }
  if (held !== `${file}:${project.samples.fileName}`) return;
  const intake = project.samples.intake as Record<string, unknown>;
  const option = e.code === 'missing-column'
    ? (['value', 'x', 'y'] as const).find((k) => values[k] === undefined && intake[k] !== undefined && intake[k] === e.place.column)
    : undefined;
  e.place.file = option
    ? `${file}, field "samples.intake.${option}"`
    : `${file}, field "samples.text" (the samples "${project.samples.fileName}" it holds)`;
}

/**
 * The command with `--project FILE`: the option is listed, required options a project supplies
 * become optional, and the project's values fill the rest when it is given.
 */
export function withProject(command: CommandSpec): CommandSpec {
  if (command.options.some((o) => o.name === 'project')) return command;
  const relaxed = command.options.filter((o) => o.required && SUPPLIED.has(o.name)).map((o) => o.name);
  const options = command.options.map((o): OptionSpec => (relaxed.includes(o.name)
    ? { ...o, required: false, defaultText: 'required unless --project gives it' }
    : o));
  return {
    ...command,
    options: [...options, PROJECT_OPTION],
    async run(values, io) {
      const file = stringOption(values, 'project');
      if (file === undefined) {
        for (const name of relaxed) {
          if (values[name] === undefined) {
            const spec = command.options.find((o) => o.name === name);
            throw new GapwiseError('bad-option',
              `Option "--${name} ${spec?.placeholder ?? 'VALUE'}" is required for "gapwise ${command.name}" (or --project FILE); "gapwise ${command.name} --help" lists the options.`);
          }
        }
        return command.run(values, io);
      }
      const routed = projectRouting(command, values, io, file);
      try {
        return await command.run(routed.values, routed.io);
      } catch (e) {
        if (e instanceof GapwiseError) nameProjectField(e, file, routed.project, routed.values);
        throw e;
      }
    },
  };
}
