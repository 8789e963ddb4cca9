// Projects with several analytes and named covariate rasters: round trip, checks naming the entry,
// analyteProject giving one analyte's project.
import { describe, expect, it } from 'vitest';
import { analyteProject, createProject, openProject, saveProject, type Project } from '../../src/io/project.ts';
import { GapwiseError } from '../../src/core/shared/errors.ts';
import type { CovarianceModel } from '../../src/core/covariance/model.ts';

const CSV = 'id,easting,northing,lead,zinc\nA,500010,4980010,120,300\nB,500050,4980020,180,410\nC,500030,4980070,95,260\nD,500070,4980060,60,150\n';
const lead: CovarianceModel = { structures: [{ type: 'nugget', sill: 10 }, { type: 'exponential', sill: 900, scale: 40 }], trend: 'constant', transform: 'none' };
const zinc: CovarianceModel = { structures: [{ type: 'nugget', sill: 0.01 }, { type: 'spherical', sill: 0.3, scale: 70 }], trend: 'constant', transform: 'log' };

function twoAnalytes(): Project {
  return createProject({
    samples: { fileName: 'yard.csv', text: CSV, intake: { value: 'lead', crs: 'EPSG:32633' }, unit: 'mg/kg' },
    model: lead, structure: { chosen: 'exponential' }, threshold: 150,
    analytes: [{
      value: 'zinc', unit: 'mg/kg', structure: { transform: 'log', variogram: {}, method: 'reml', chosen: 'spherical' }, model: zinc, threshold: 400,
      suggestions: [{ rank: 1, x: 500040, y: 4980040, lon: 15, lat: 45, benefit: 2, mean: 250, sd: 40 }],
    }],
    covariateRasters: [{ covariate: 'dist', fileName: 'dist.tif' }],
    software: { name: 'gapwise', version: '0.1.0' }, saved: '2026-01-01T00:00:00.000Z',
  });
}

describe('projects with several analytes', () => {
  it('openProject reads back the further analytes and the named rasters as saveProject wrote them', () => {
    const p = twoAnalytes();
    const back = openProject(saveProject(p), 'yard.gapwise.json').project;
    expect(back).toEqual(p);
    expect(back.analytes![0].threshold).toBe(400);
    expect(back.covariateRasters).toEqual([{ covariate: 'dist', fileName: 'dist.tif' }]);
  });

  it('analyteProject gives the top level for its own value and the other analyte\'s work in place for another', () => {
    const p = twoAnalytes();
    const own = analyteProject(p, 'lead')!;
    expect(own.analytes).toBeUndefined();
    expect(own.model).toEqual(lead);
    const z = analyteProject(p, 'zinc')!;
    expect(z.samples.intake).toEqual({ value: 'zinc', crs: 'EPSG:32633' });
    expect(z.samples.text).toBe(CSV);
    expect([z.model, z.threshold, z.structure.chosen, z.suggestions?.length]).toEqual([zinc, 400, 'spherical', 1]);
    expect(z.covariateRasters).toEqual(p.covariateRasters);
    expect(analyteProject(p, 'copper')).toBeNull();
  });

  it('openProject refuses an analyte repeated or with a bad field, naming the entry and the analyte', () => {
    const p = JSON.parse(saveProject(twoAnalytes())) as Record<string, unknown> & { analytes: Array<Record<string, unknown>> };
    const again = { ...p, analytes: [p.analytes[0], { ...p.analytes[0] }] };
    expect(() => openProject(JSON.stringify(again), 'x.json')).toThrow(/analytes\[1\]\.value/);
    const bad = { ...p, analytes: [{ ...p.analytes[0], threshold: 'high' }] };
    let error: unknown;
    try {
      openProject(JSON.stringify(bad), 'x.json');
    } catch (e) {
      error = e;
    }
    expect(error).toBeInstanceOf(GapwiseError);
    expect((error as Error).message).toMatch(/^In analytes\[0\] \(zinc\): .*threshold/);
    // The model's transform must agree with the analyte's structure, as at the top level.
    const mixed = { ...p, analytes: [{ ...p.analytes[0], structure: { ...(p.analytes[0].structure as object), transform: 'none' } }] };
    expect(() => openProject(JSON.stringify(mixed), 'x.json')).toThrow(/In analytes\[0\] \(zinc\)/);
    const top = { ...p, analytes: [{ ...p.analytes[0], value: 'lead' }] };
    expect(() => openProject(JSON.stringify(top), 'x.json')).toThrow(/not named before/);
  });
});
