/**
 * Figures of what is on screen, for the browser tests to compare before and after a reload: sums
 * over the surface and realisation layers, the candidate table, the cross-validation summary, the
 * suggested sites and the panel choices. Computed from the state; nothing is recomputed.
 */
import type { Session } from './session.svelte.ts';

function sum(a: ArrayLike<number> | undefined): number | null {
  if (!a) return null;
  let t = 0;
  for (let k = 0; k < a.length; k++) if (a[k] === a[k]) t += a[k];
  return t;
}

export function sessionDigest(app: Session): Record<string, unknown> {
  const { s, samples, structure, surface, realisations, design, analytes } = app;
  const intake = samples.intake;
  const sf = surface.shown;
  const sim = realisations.simulation;
  const sites = design.current;
  const model = s.structure.model;
  return {
    readId: s.readId,
    analyte: analytes.current,
    analytes: analytes.names,
    parked: Object.keys(analytes.parkedWork),
    rasters: app.rasters.covariateRasters.map((r) => r.name),
    samples: intake ? { n: intake.samples.x.length, value: sum(intake.samples.value), x: sum(intake.samples.x) } : null,
    boundary: s.boundary?.fileName ?? null,
    candidates: structure.candidates.map((c) => [c.key, c.aic, c.rmse, c.msse]),
    chosen: s.structure.chosen,
    model: model ? { anisotropy: model.anisotropy ?? null, structures: model.structures.length } : null,
    cv: structure.cv ? { ...structure.cv.summary } : null,
    surface: sf ? {
      done: sf.done, cells: sf.result.cells, nx: sf.grid.nx, ny: sf.grid.ny, mean: sum(sf.result.mean), sd: sum(sf.result.sd),
      pExceed: sum(sf.result.pExceed), fromSimulation: sf.fromSimulation ?? null, stale: surface.stale,
    } : null,
    simulation: sim ? {
      count: sim.result.count, seed: sim.seed, mean: sum(sim.result.mean), kept: sim.result.realisations?.length ?? 0,
      first: sum(sim.result.realisations?.[0]), area: sim.result.area?.area ?? null, stale: realisations.stale,
    } : null,
    suggestions: sites ? sites.suggestions.map((p) => [p.rank, p.x, p.y]) : null,
    choices: {
      simulation: { ...s.simulation }, next: { ...s.next }, support: s.surface.support,
      blockPoints: s.surface.blockPoints, threshold: s.surface.threshold, layer: s.surface.layer,
      colours: s.surface.colours,
    },
  };
}
