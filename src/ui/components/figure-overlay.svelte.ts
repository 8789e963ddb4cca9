/**
 * Which Structure figure is open large over the map (the map sits idle during that step): the
 * variogram, the cross-validation plots or the candidate table; null when none.
 */
export type LargeFigure = 'variogram' | 'cv' | 'candidates';

export const largeFigure = $state<{ kind: LargeFigure | null }>({ kind: null });

export function openLarge(kind: LargeFigure): void {
  largeFigure.kind = kind;
}

export function closeLarge(): void {
  largeFigure.kind = null;
}
