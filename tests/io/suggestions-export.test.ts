import { SOFTWARE } from '../../src/core/shared/version.ts';
import { describe, expect, it } from 'vitest';
import * as gjv from 'geojson-validation';
import { designSummary, numberText, suggestionsToCsv, suggestionsToGeoJson, type ExportableDesign } from '../../src/io/suggestions-export.ts';
import { CAUTION } from '../../src/core/shared/caution.ts';

function design(overrides: Partial<ExportableDesign> = {}): ExportableDesign {
  return {
    mode: 'decision',
    benefitMeaning: 'drop of the expected misclassified area against the threshold (m²)',
    threshold: 200,
    scale: 'data',
    averageSdBefore: 40.5, averageSdAfter: 37.25,
    misclassifiedAreaBefore: 5200, misclassifiedAreaAfter: 4100, areaDecided: 1100,
    coverageDistanceBefore: null, coverageDistanceAfter: null,
    suggestions: [
      { rank: 1, x: 500010.25, y: 5400020.5, lon: 15.0001234567, lat: 48.7523456789, benefit: 512.25, mean: 180.5, sd: 35.1, pExceed: 0.29 },
      { rank: 2, x: 500110, y: 5400120, lon: 15.002, lat: 48.754, benefit: 300.1 + 1e-13, mean: 220, sd: 30, pExceed: 0.74 },
    ],
    ...overrides,
  };
}

describe('suggestionsToGeoJson', () => {
  it('suggestionsToGeoJson with local coordinates writes x, y positions, says they are local, and no metres in its keys', () => {
    const local = design({ suggestions: design().suggestions.map((s) => ({ ...s, lon: undefined, lat: undefined, x: s.x - 500000, y: s.y - 5400000 })) });
    const obj = JSON.parse(suggestionsToGeoJson(local, { local: true }));
    expect(obj.features[0].geometry).toEqual({ type: 'Point', coordinates: [10.25, 20.5] });
    expect(obj.properties.coordinates).toBe('local');
    expect(obj.properties.coordinates_note).toMatch(/not longitude\/latitude/);
    expect(obj.properties.caution).toBe(CAUTION);
    expect(obj.properties).toMatchObject({ misclassified_area_before_square_units: 5200, area_decided_square_units: 1100 });
    expect(Object.keys(obj.properties).filter((k) => /_m2?$/.test(k))).toEqual([]);
    // Without `local`, a suggestion with no lon/lat is refused.
    expect(() => suggestionsToGeoJson(local)).toThrow(/longitude/);
    const csv = suggestionsToCsv(local, { local: true, caution: false }).split('\n');
    expect(csv[0]).toBe('rank,x,y,benefit,mean,sd,p_exceed');
    expect(csv[1]).toBe('1,10.25,20.5,512.25,180.5,35.1,0.29');
  });

  it('suggestionsToGeoJson writes a FeatureCollection that geojson-validation accepts, in lon/lat order', () => {
    const text = suggestionsToGeoJson(design());
    const obj = JSON.parse(text);
    expect(gjv.valid(obj, true)).toEqual([]);
    expect(obj.type).toBe('FeatureCollection');
    expect(obj.features).toHaveLength(2);
    // RFC 7946 §3.1.1: longitude first; 7 decimals.
    expect(obj.features[0].geometry).toEqual({ type: 'Point', coordinates: [15.0001235, 48.7523457] });
    expect(obj.features[0].properties).toEqual({ rank: 1, benefit: 512.25, mean: 180.5, sd: 35.1, p_exceed: 0.29 });
    expect(obj.features[1].properties.benefit).toBe(300.1);
  });

  it('suggestionsToGeoJson carries the caution and the summary in the collection\'s properties', () => {
    const obj = JSON.parse(suggestionsToGeoJson(design()));
    expect(obj.properties.caution).toBe(CAUTION);
    expect(obj.properties).toMatchObject({ mode: 'decision', threshold: 200, misclassified_area_before_m2: 5200, area_decided_m2: 1100, average_sd_after: 37.25 });
  });

  it('suggestionsToGeoJson writes null for values a coverage design has not, and rejects a missing lon/lat', () => {
    const obj = JSON.parse(suggestionsToGeoJson(design({
      mode: 'coverage', threshold: null, averageSdBefore: null, averageSdAfter: null,
      suggestions: [{ rank: 1, x: 1, y: 2, lon: -3.5, lat: 40, benefit: 12, mean: null, sd: null, pExceed: null }],
    })));
    expect(gjv.valid(obj, true)).toEqual([]);
    expect(obj.features[0].properties).toEqual({ rank: 1, benefit: 12, mean: null, sd: null, p_exceed: null });
    expect(() => suggestionsToGeoJson(design({ suggestions: [{ rank: 4, x: 1, y: 2, lon: 200, lat: 40, benefit: 1, mean: 1, sd: 1, pExceed: null }] })))
      .toThrow(/Suggestion 4 has longitude 200/);
  });
});

describe('suggestionsToCsv', () => {
  it('suggestionsToCsv writes rank, x, y, lon, lat, benefit, mean, sd, p_exceed', () => {
    const [caution, ...lines] = suggestionsToCsv(design()).split('\n');
    expect(caution).toBe(`# ${CAUTION} Written by ${SOFTWARE}.`);
    expect(lines[0]).toBe('rank,x,y,lon,lat,benefit,mean,sd,p_exceed');
    expect(lines[1]).toBe('1,500010.25,5400020.5,15.0001235,48.7523457,512.25,180.5,35.1,0.29');
    expect(lines[2]).toBe('2,500110,5400120,15.002,48.754,300.1,220,30,0.74');
    expect(lines[3]).toBe('');
  });

  it('suggestionsToCsv uses the samples\' CRS coordinates when given, and drops p_exceed without a threshold', () => {
    const text = suggestionsToCsv(design({ threshold: null }), { inputX: [15.0001234567, 15.002], inputY: [48.7523456789, 48.754], newline: '\r\n', caution: false });
    const lines = text.split('\r\n');
    expect(lines[0]).toBe('rank,x,y,lon,lat,benefit,mean,sd');
    expect(lines[1].split(',').slice(0, 3)).toEqual(['1', '15.0001234567', '48.7523456789']);
    expect(() => suggestionsToCsv(design(), { inputX: [1] })).toThrow(/Expected 2 input-CRS coordinates/);
  });

  it('suggestionsToCsv writes negative numbers as numbers (no apostrophe: only text cells are neutralised)', () => {
    const text = suggestionsToCsv(design({ threshold: null }), { inputX: [-12.5, -0.001], inputY: [-3e-7, 4], caution: false });
    expect(text.split('\n')[1].split(',').slice(0, 3)).toEqual(['1', '-12.5', '-3e-7']);
    expect(text).not.toContain("'");
  });

  it('suggestionsToCsv leaves lon and lat empty for local coordinates without a CRS', () => {
    const text = suggestionsToCsv(design({ suggestions: [{ rank: 1, x: 12.5, y: 40, benefit: 2, mean: 3, sd: 1, pExceed: 0.5 }] }), { caution: false });
    expect(text.split('\n')[1]).toBe('1,12.5,40,,,2,3,1,0.5');
  });
});

describe('numberText', () => {
  it('numberText keeps 12 significant digits and writes empty cells for null and NaN', () => {
    expect(numberText(0.1 + 0.2)).toBe('0.3');
    expect(numberText(6012345.123456789)).toBe('6012345.12346');
    expect(numberText(null)).toBe('');
    expect(numberText(NaN)).toBe('');
  });
});

describe('designSummary', () => {
  it('designSummary turns non-finite figures into null', () => {
    expect(designSummary(design({ coverageDistanceBefore: Infinity })).coverage_distance_before_m).toBeNull();
  });
});
