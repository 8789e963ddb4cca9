// sessionProject / snapshotFromProject: the app's session and a project file carry the same choices.
import { describe, expect, it } from 'vitest';
import { sessionProject, snapshotFromProject } from '../../../../src/ui/components/report/session-project.ts';
import { emptySnapshot } from '../../../../src/ui/state/snapshot.ts';
import { openProject, saveProject } from '../../../../src/io/project.ts';
import type { CovarianceModel } from '../../../../src/core/model.ts';

const model: CovarianceModel = { structures: [{ type: 'nugget', sill: 0.1 }, { type: 'matern', sill: 1, scale: 50, nu: 1.5 }], trend: 'constant', transform: 'log' };

describe('sessionProject', () => {
  it('sessionProject is null before a file is read', () => {
    expect(sessionProject({ snapshot: emptySnapshot(), software: { name: 'gapwise', version: '1' } })).toBeNull();
  });

  it('sessionProject → saveProject → openProject → snapshotFromProject gives the session\'s choices back', () => {
    const s = emptySnapshot();
    s.source = { fileName: 'a.csv', text: 'lon,lat,v\n11,48,1\n', invented: true };
    s.boundary = { fileName: 'b.geojson', text: '{}', invented: false };
    s.samples = { value: 'v', crs: 'EPSG:4326', nonDetect: 'dl', unit: 'mg/kg', transform: 'log' };
    s.structure = { ...s.structure, lagWidth: 12, maxLag: 0, method: 'wls', chosen: 'matern-1.5', model };
    s.surface = { ...s.surface, area: 'boundary', padding: 0.1, cellSize: 5, threshold: 200 };
    const grid = { x0: 10, y0: 20, cell: 5, nx: 3, ny: 4 };
    const p = sessionProject({
      snapshot: s, grid, software: { name: 'gapwise', version: '1' },
      candidates: [{ key: 'matern-1.5', label: 'Matérn ν = 3/2', model, logLikelihood: -10, aic: 26, rmse: 0.3, msse: NaN }],
    })!;
    expect(p).toMatchObject({
      samples: { fileName: 'a.csv', invented: true, intake: { value: 'v', crs: 'EPSG:4326', nonDetect: 'dl' }, unit: 'mg/kg' },
      structure: { transform: 'log', method: 'wls', chosen: 'matern-1.5', variogram: { lagWidth: 12 } },
      grid: { area: 'boundary', padding: 0.1, cellSize: 5, geometry: grid }, threshold: 200,
    });
    expect(p.structure.comparison![0].msse).toBeNull();
    const back = snapshotFromProject(openProject(saveProject(p), 'p.json').project, emptySnapshot());
    expect(back.source).toEqual(s.source);
    expect(back.samples).toEqual({ ...s.samples, x: undefined, y: undefined });
    expect(back.structure).toMatchObject({ lagWidth: 12, method: 'wls', chosen: 'matern-1.5', model });
    expect(back.surface).toMatchObject({ area: 'boundary', padding: 0.1, cellSize: 5, threshold: 200, wanted: true });
  });
});
