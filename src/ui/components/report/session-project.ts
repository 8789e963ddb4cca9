/**
 * Between the app's saved session and a project file (src/io/project.ts): `sessionProject` turns
 * the session's file texts, choices, model, candidate table, computed grid and drawn realisations
 * (with the area above the action level they gave) into a project; `snapshotFromProject` puts an
 * opened project back into a session snapshot (the app then reads the samples again and
 * recomputes). `drawnSimulation` is the project's record of realisations on screen. Pure functions,
 * no Svelte.
 */
import { isCovariateTrend } from '../../../core/covariance/model.ts';
import type { Grid } from '../../../core/geometry/grid.ts';
import type { ConditionalSimulationResult } from '../../../core/simulation/conditional-simulation.ts';
import {
  analyteProject, createProject, gridGeometry, projectSimulation, type ComparisonRow, type Project, type ProjectAnalyte, type ProjectRasterName,
  type ProjectSimulation, type Suggestion,
} from '../../../io/project.ts';
import type { AnalyteChoices, SessionSnapshot } from '../../state/snapshot.ts';
import type { CandidateRow } from '../../state/structure.ts';

export interface SessionParts {
  snapshot: SessionSnapshot;
  /** The comparison table as fitted (session.candidates). */
  candidates?: readonly CandidateRow[];
  /** The grid the surface was computed on (session.surface?.grid or the planned grid). */
  grid?: Grid | null;
  suggestions?: Suggestion[];
  suggestOptions?: Record<string, unknown>;
  /**
   * Realisations drawn for the current settings, with their summary (see drawnSimulation); without
   * them the project keeps the realisation settings of the snapshot only.
   */
  simulation?: ProjectSimulation | null;
  software: { name: string; version: string };
  title?: string;
  /** Further analytes (see projectAnalyte), beside the one the snapshot holds. */
  analytes?: ProjectAnalyte[];
  /** Covariate rasters loaded, by name (the files are not held in the project). */
  covariateRasters?: ProjectRasterName[];
}

/** One analyte's project as an entry of another project's `analytes`. */
export function projectAnalyte(p: Project): ProjectAnalyte {
  const out: ProjectAnalyte = {
    value: p.samples.intake.value ?? '', unit: p.samples.unit, structure: p.structure, model: p.model, threshold: p.threshold,
  };
  if (p.suggestions) out.suggestions = p.suggestions;
  if (p.suggestOptions) out.suggestOptions = p.suggestOptions;
  if (p.simulation) out.simulation = p.simulation;
  return out;
}

/** The project's record of realisations on screen: their settings and the area they gave. */
export function drawnSimulation(
  view: { result: Pick<ConditionalSimulationResult, 'count' | 'support' | 'points' | 'area'>; seed: number; depth: number | null; made: string },
  log: boolean,
): ProjectSimulation {
  return projectSimulation(view.result, { seed: view.seed, depth: view.depth, log, made: view.made });
}

const finiteOrNull = (v: number): number | null => (Number.isFinite(v) ? v : null);

/** The session as a project; null before a samples file is read. */
export function sessionProject(parts: SessionParts): Project | null {
  const s = parts.snapshot;
  if (!s.source) return null;
  const intake: Project['samples']['intake'] = {};
  if (s.samples.value !== undefined) intake.value = s.samples.value;
  if (s.samples.x !== undefined) intake.x = s.samples.x;
  if (s.samples.y !== undefined) intake.y = s.samples.y;
  if (s.samples.crs !== undefined) intake.crs = s.samples.crs;
  if (s.samples.nonDetect !== undefined) intake.nonDetect = s.samples.nonDetect;
  const comparison: ComparisonRow[] | undefined = parts.candidates?.length
    ? parts.candidates.map((c) => ({
      key: c.key, label: c.label, model: c.model,
      logLikelihood: finiteOrNull(c.logLikelihood), aic: finiteOrNull(c.aic), rmse: finiteOrNull(c.rmse), msse: finiteOrNull(c.msse),
      ...(c.error ? { error: c.error } : {}),
    }))
    : undefined;
  const model = s.structure.model ? { ...s.structure.model, transform: s.samples.transform } : null;
  return createProject({
    samples: { fileName: s.source.fileName, text: s.source.text, invented: s.source.invented, intake, unit: s.samples.unit },
    boundary: s.boundary ? { fileName: s.boundary.fileName, text: s.boundary.text, ...(s.boundary.invented ? { invented: true } : {}) } : null,
    structure: {
      transform: s.samples.transform,
      variogram: { ...(s.structure.lagWidth > 0 ? { lagWidth: s.structure.lagWidth } : {}), ...(s.structure.maxLag > 0 ? { maxLag: s.structure.maxLag } : {}) },
      method: s.structure.method,
      chosen: s.structure.chosen,
      ...(comparison ? { comparison } : {}),
    },
    model,
    grid: {
      area: s.boundary && s.surface.area === 'boundary' ? 'boundary' : 'extent',
      padding: s.surface.padding,
      cellSize: s.surface.cellSize,
      ...(parts.grid ? { geometry: gridGeometry(parts.grid) } : {}),
    },
    threshold: s.surface.threshold,
    ...(parts.suggestions ? { suggestions: parts.suggestions } : {}),
    ...(parts.suggestOptions ? { suggestOptions: parts.suggestOptions } : {}),
    simulation: parts.simulation ?? {
      count: s.simulation.count, seed: s.simulation.seed, support: s.surface.support,
      blockPoints: s.surface.support === 'block' ? s.surface.blockPoints : 1, depth: s.simulation.depth,
    },
    software: parts.software,
    title: parts.title ?? '',
    ...(parts.analytes?.length ? { analytes: parts.analytes } : {}),
    ...(parts.covariateRasters?.length ? { covariateRasters: parts.covariateRasters } : {}),
  });
}

/** An opened project as a session snapshot, keeping the view choices (layer, map) of `base`. */
export function snapshotFromProject(project: Project, base: SessionSnapshot): SessionSnapshot {
  const own = oneAnalyteSnapshot(project, base);
  const others = project.analytes ?? [];
  if (others.length === 0 || project.samples.intake.value === undefined) return own;
  // Further analytes wait parked (not read yet: each is read when it is switched to).
  const parked: Record<string, AnalyteChoices> = {};
  for (const a of others) {
    const p = analyteProject(project, a.value);
    if (!p) continue;
    const s = oneAnalyteSnapshot(p, base);
    parked[a.value] = { readId: '', samples: s.samples, structure: s.structure, surface: { ...s.surface, wanted: false }, simulation: s.simulation, next: s.next };
  }
  return { ...own, analytes: { chosen: [project.samples.intake.value, ...Object.keys(parked)], parked } };
}

function oneAnalyteSnapshot(project: Project, withAnalytes: SessionSnapshot): SessionSnapshot {
  const { analytes: _other, ...base } = withAnalytes;
  void _other;
  const i = project.samples.intake;
  const method = project.structure.method === 'wls' ? 'wls' : 'reml';
  return {
    ...base,
    step: 'report',
    source: { fileName: project.samples.fileName, text: project.samples.text, invented: project.samples.invented === true },
    boundary: project.boundary ? { fileName: project.boundary.fileName, text: project.boundary.text, invented: project.boundary.invented === true } : null,
    samples: {
      value: i.value, x: i.x, y: i.y, crs: i.crs, nonDetect: i.nonDetect, unit: project.samples.unit, transform: project.structure.transform,
      // The covariates chosen are the model's own (a project stores the model, not the choice).
      ...(project.model && isCovariateTrend(project.model.trend) ? { covariates: [...project.model.trend.covariates] } : {}),
    },
    structure: {
      ...base.structure,
      lagWidth: project.structure.variogram.lagWidth ?? 0,
      maxLag: project.structure.variogram.maxLag ?? 0,
      method,
      chosen: project.structure.chosen,
      model: project.model,
    },
    surface: {
      ...base.surface,
      area: project.grid.area,
      padding: project.grid.padding,
      cellSize: project.grid.geometry?.cell ?? project.grid.cellSize,
      threshold: project.threshold,
      wanted: project.model !== null,
      ...(project.simulation ? {
        support: project.simulation.support,
        blockPoints: project.simulation.support === 'block' ? project.simulation.blockPoints : base.surface.blockPoints,
      } : {}),
    },
    simulation: project.simulation
      ? { count: project.simulation.count, seed: project.simulation.seed, depth: project.simulation.depth }
      : { ...base.simulation },
  };
}
