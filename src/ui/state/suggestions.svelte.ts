/**
 * The suggested next sample sites, shared between the Next samples step (which makes them), the map
 * (which marks them) and the Report step (which writes them into the project and the report).
 * Suggestions belong to the samples they were made from: `current` drops them once the samples are
 * read again.
 */
import type { DesignResult } from '../../core/design.ts';
import type { Suggestion as ProjectSuggestion } from '../../io/project.ts';
import type { Session } from './session.svelte.ts';

export class SuggestionsState {
  /** The app's session (registered by the map view, which every page has). */
  session = $state.raw<Session | null>(null);
  /** The last design, its options and the samples version it was made from. */
  result = $state.raw<DesignResult | null>(null);
  options = $state.raw<Record<string, unknown> | null>(null);
  samplesVersion = $state(-1);

  /** The design for the samples now read, or null. */
  get current(): DesignResult | null {
    const s = this.session;
    if (!this.result || !s || s.samplesVersion !== this.samplesVersion) return null;
    return this.result;
  }

  /** Keeps a new design (null clears). */
  set(result: DesignResult | null, options: Record<string, unknown> | null = null): void {
    this.result = result;
    this.options = result ? options : null;
    this.samplesVersion = this.session?.samplesVersion ?? -1;
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
