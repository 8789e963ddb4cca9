/**
 * The suggested next sample sites, shared between the Next samples step (which makes them), the map
 * (which marks them) and the Report step (which writes them into the project and the report).
 * Suggestions belong to the samples they were made from: `current` drops them once the samples are
 * read again.
 */
import type { DesignResult } from '../../core/design/design.ts';
import type { Suggestion as ProjectSuggestion } from '../../io/project.ts';
import type { Session } from './session.svelte.ts';
import { CAUTION } from '../../core/shared/caution.ts';

class SuggestionsState {
  /** The app's session (registered by the map view, which every page has). */
  session = $state.raw<Session | null>(null);
  /** The last design, its options and the samples version it was made from. */
  result = $state.raw<DesignResult | null>(null);
  options = $state.raw<Record<string, unknown> | null>(null);
  samplesVersion = $state(-1);

  /** The design for the samples now read, or null. */
  get current(): DesignResult | null {
    const s = this.session;
    if (!this.result || !s || s.samples.samplesVersion !== this.samplesVersion) return null;
    return this.result;
  }

  /** Keeps a new design (null clears). */
  set(result: DesignResult | null, options: Record<string, unknown> | null = null): void {
    this.result = result;
    this.options = result ? options : null;
    this.samplesVersion = this.session?.samples.samplesVersion ?? -1;
  }
}

/** The one shared instance. */
export const suggestions = new SuggestionsState();

/**
 * The suggestions as a project file lists them; sites without lon/lat, or without a mean and sd (a
 * coverage design made without a model), are left out.
 */
export function projectSuggestions(result: DesignResult | null): ProjectSuggestion[] | undefined {
  if (!result || result.suggestions.length === 0) return undefined;
  const out: ProjectSuggestion[] = [];
  for (const s of result.suggestions) {
    if (s.lon === undefined || s.lat === undefined || s.mean === null || s.sd === null) continue;
    out.push({
      rank: s.rank, x: s.x, y: s.y, lon: s.lon, lat: s.lat, benefit: s.benefit,
      mean: s.mean, sd: s.sd,
      ...(s.pExceed !== null ? { pExceed: s.pExceed } : {}),
    });
  }
  return out.length > 0 ? out : undefined;
}

/**
 * The suggested sites a project file holds, as a design result the Next samples step and the map
 * show again: sites, mode and options as saved; the before/after figures are not in the file (null).
 */
export function designFromProject(sites: readonly ProjectSuggestion[] | undefined, options: Record<string, unknown> | undefined, threshold: number | null): DesignResult | null {
  if (!sites || sites.length === 0) return null;
  const o = options ?? {};
  const modes = ['variance', 'decision', 'coverage'] as const;
  const mode = modes.find((m) => m === o.mode) ?? (sites.some((s) => s.pExceed !== undefined) ? 'decision' : 'variance');
  const num = (v: unknown, d: number): number => (typeof v === 'number' && Number.isFinite(v) ? v : d);
  return {
    mode,
    requested: num(o.count, sites.length),
    suggestions: sites.map((s) => ({
      rank: s.rank, x: s.x, y: s.y, lon: s.lon, lat: s.lat, benefit: s.benefit, mean: s.mean, sd: s.sd, pExceed: s.pExceed ?? null,
    })),
    benefitMeaning: mode === 'decision'
      ? 'drop of the expected misclassified area against the threshold (m²), as saved in the project'
      : mode === 'coverage'
        ? 'how much the mean squared distance from the area to the nearest sample would rise without this site (m²), as saved in the project'
        : 'drop of the average variance of the surface over the area, as saved in the project',
    scale: 'data',
    averageSdBefore: null,
    averageSdAfter: null,
    misclassifiedAreaBefore: null,
    misclassifiedAreaAfter: null,
    areaDecided: null,
    coverageDistanceBefore: null,
    coverageDistanceAfter: null,
    threshold: typeof o.threshold === 'number' ? o.threshold : threshold,
    area: 0,
    cell: num(o.cell, 0),
    minSpacing: num(o.minSpacing, 0),
    evaluationPoints: 0,
    candidatePoints: 0,
    screenedCandidates: 0,
    warnings: [],
    caution: CAUTION,
  };
}
