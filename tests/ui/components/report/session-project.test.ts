// sessionProject / snapshotFromProject: the app's session and a project file carry the same choices.
import { describe, expect, it } from 'vitest';
import { drawnSimulation, projectAnalyte, sessionProject, snapshotFromProject } from '../../../../src/ui/components/report/session-project.ts';
import { summariseExceedanceCounts } from '../../../../src/core/prediction/exceedance-area.ts';
import { emptySnapshot } from '../../../../src/ui/state/snapshot.ts';
import { openProject, saveProject } from '../../../../src/io/project.ts';
import type { CovarianceModel } from '../../../../src/core/covariance/model.ts';

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

  it('sessionProject keeps drawn realisations with their area, and snapshotFromProject gives back support, block points, count, seed and depth', () => {
    const s = emptySnapshot();
    s.source = { fileName: 'a.csv', text: 'lon,lat,v\n11,48,1\n', invented: false };
    s.structure = { ...s.structure, model };
    s.samples = { unit: 'mg/kg', transform: 'log' };
    s.surface = { ...s.surface, threshold: 200, support: 'block', blockPoints: 3 };
    s.simulation = { count: 60, seed: 9, depth: 0.5 };
    // Counts of cells above 200 in 60 invented realisations on 4 m cells.
    const counts = Array.from({ length: 60 }, (_, i) => 100 + ((i * 37) % 41));
    const area = summariseExceedanceCounts(counts, { threshold: 200, cell: 4, activeCells: 900, depth: 0.5 });
    const sim = drawnSimulation({ result: { count: 60, support: 'block', points: 3, area }, seed: 9, depth: 0.5, made: '2026-03-01T10:00:00.000Z' }, true);
    const p = sessionProject({ snapshot: s, simulation: sim, software: { name: 'gapwise', version: '1' } })!;
    expect(p.simulation).toMatchObject({ count: 60, seed: 9, support: 'block', blockPoints: 3, depth: 0.5 });
    expect(p.simulation!.summary!.area.median).toBe(area.area.median);
    expect(p.simulation!.summary!.volume!.p95).toBe(area.volume!.p95);
    expect(p.simulation!.summary!.method).toContain('back-transformed cell by cell');
    const opened = openProject(saveProject(p), 'p.json').project;
    expect(opened.simulation).toEqual(p.simulation);
    const back = snapshotFromProject(opened, emptySnapshot());
    expect(back.surface).toMatchObject({ support: 'block', blockPoints: 3, threshold: 200 });
    expect(back.simulation).toEqual({ count: 60, seed: 9, depth: 0.5 });
  });

  it('sessionProject keeps the realisation settings of the snapshot when none are drawn', () => {
    const s = emptySnapshot();
    s.source = { fileName: 'a.csv', text: 'lon,lat,v\n11,48,1\n', invented: false };
    s.simulation = { count: 30, seed: 5, depth: null };
    const p = sessionProject({ snapshot: s, software: { name: 'gapwise', version: '1' } })!;
    expect(p.simulation).toEqual({ count: 30, seed: 5, support: 'point', blockPoints: 1, depth: null });
    expect(snapshotFromProject(p, emptySnapshot()).simulation).toEqual({ count: 30, seed: 5, depth: null });
  });
});

describe('sessionProject / snapshotFromProject with several analytes', () => {
  it('snapshotFromProject parks each further analyte with its own model and action level, to be read on switching', () => {
    const lead = emptySnapshot();
    lead.source = { fileName: 'a.csv', text: 'lon,lat,pb,zn\n11,48,1,3\n', invented: false };
    lead.samples = { value: 'pb', crs: 'EPSG:4326', unit: 'mg/kg', transform: 'log' };
    lead.structure = { ...lead.structure, chosen: 'matern-1.5', model };
    lead.surface = { ...lead.surface, threshold: 200 };
    const zinc = { ...lead, samples: { ...lead.samples, value: 'zn', transform: 'none' as const }, structure: { ...lead.structure, model: { ...model, transform: 'none' as const }, chosen: 'exp' }, surface: { ...lead.surface, threshold: 720 } };
    const software = { name: 'gapwise', version: '1' };
    const zp = sessionProject({ snapshot: zinc, software })!;
    const p = sessionProject({ snapshot: lead, software, analytes: [projectAnalyte(zp)], covariateRasters: [{ covariate: 'd', fileName: 'd.tif' }] })!;
    expect(p.analytes!.map((a) => [a.value, a.threshold, a.structure.chosen])).toEqual([['zn', 720, 'exp']]);
    expect(p.covariateRasters).toEqual([{ covariate: 'd', fileName: 'd.tif' }]);
    const back = snapshotFromProject(openProject(saveProject(p), 'p.json').project, emptySnapshot());
    expect(back.samples.value).toBe('pb');
    expect(back.surface.threshold).toBe(200);
    expect(back.analytes!.chosen).toEqual(['pb', 'zn']);
    const parked = back.analytes!.parked.zn;
    expect(parked.readId).toBe('');
    expect([parked.samples.value, parked.samples.crs, parked.samples.transform, parked.surface.threshold, parked.structure.chosen]).toEqual(['zn', 'EPSG:4326', 'none', 720, 'exp']);
    expect(parked.structure.model!.transform).toBe('none');
    // One analyte: no set, even when the session held one before.
    expect(snapshotFromProject(zp, back).analytes).toBeUndefined();
  });
});
