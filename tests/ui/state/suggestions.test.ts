import { describe, expect, it } from 'vitest';
import { designFromProject, projectSuggestions } from '../../../src/ui/state/suggestions.svelte.ts';
import type { DesignResult, Suggestion } from '../../../src/core/design/design.ts';

function design(suggestions: Suggestion[]): DesignResult {
  return {
    mode: 'decision', requested: suggestions.length, suggestions, benefitMeaning: 'm²', scale: 'data',
    averageSdBefore: 2, averageSdAfter: 1, misclassifiedAreaBefore: 10, misclassifiedAreaAfter: 5, areaDecided: 5,
    coverageDistanceBefore: null, coverageDistanceAfter: null, threshold: 200, area: 100, cell: 1, minSpacing: 0,
    evaluationPoints: 10, candidatePoints: 10, screenedCandidates: 10, warnings: [], caution: '',
  };
}

describe('projectSuggestions', () => {
  it('projectSuggestions keeps rank, positions and figures, and pExceed only when known', () => {
    const out = projectSuggestions(design([
      { rank: 1, x: 10, y: 20, lon: 11.2, lat: 48.5, benefit: 3, mean: 210, sd: 40, pExceed: 0.6 },
      { rank: 2, x: 30, y: 40, lon: 11.3, lat: 48.6, benefit: 2, mean: 150, sd: 30, pExceed: null },
    ]));
    expect(out).toEqual([
      { rank: 1, x: 10, y: 20, lon: 11.2, lat: 48.5, benefit: 3, mean: 210, sd: 40, pExceed: 0.6 },
      { rank: 2, x: 30, y: 40, lon: 11.3, lat: 48.6, benefit: 2, mean: 150, sd: 30 },
    ]);
  });

  it('projectSuggestions leaves out sites without lon/lat or without a model figure, and gives undefined when none is left', () => {
    const out = projectSuggestions(design([
      { rank: 1, x: 10, y: 20, benefit: 3, mean: 210, sd: 40, pExceed: null },
      { rank: 2, x: 30, y: 40, lon: 11.3, lat: 48.6, benefit: 2, mean: null, sd: null, pExceed: null },
      { rank: 3, x: 50, y: 60, lon: 11.4, lat: 48.7, benefit: 1, mean: 100, sd: 20, pExceed: null },
    ]));
    expect(out?.map((s) => s.rank)).toEqual([3]);
    expect(projectSuggestions(design([{ rank: 1, x: 0, y: 0, benefit: 1, mean: null, sd: null, pExceed: null }]))).toBeUndefined();
    expect(projectSuggestions(null)).toBeUndefined();
  });
});

describe('designFromProject', () => {
  it('designFromProject gives back the sites a project holds, with the mode and spacing of its options', () => {
    const sites = [
      { rank: 1, x: 10, y: 20, lon: 11.2, lat: 48.5, benefit: 3, mean: 210, sd: 40, pExceed: 0.6 },
      { rank: 2, x: 30, y: 40, lon: 11.3, lat: 48.6, benefit: 2, mean: 150, sd: 30 },
    ];
    const d = designFromProject(sites, { mode: 'decision', count: 2, minSpacing: 15, threshold: 200 }, null)!;
    expect(d.mode).toBe('decision');
    expect(d.requested).toBe(2);
    expect(d.minSpacing).toBe(15);
    expect(d.threshold).toBe(200);
    expect(d.suggestions.map((s) => [s.rank, s.x, s.y, s.pExceed])).toEqual([[1, 10, 20, 0.6], [2, 30, 40, null]]);
    expect(d.averageSdBefore).toBeNull();
    // Saved again, the project holds the same sites.
    expect(projectSuggestions(d)).toEqual(sites);
  });

  it('designFromProject gives null for a project without sites, and a mode from the sites when the options name none', () => {
    expect(designFromProject(undefined, undefined, null)).toBeNull();
    expect(designFromProject([], {}, null)).toBeNull();
    const d = designFromProject([{ rank: 1, x: 1, y: 2, lon: 0, lat: 0, benefit: 1, mean: 5, sd: 1 }], undefined, 7)!;
    expect(d.mode).toBe('variance');
    expect(d.threshold).toBe(7);
  });
});
