// The command line finds the coordinate columns of targets and sites files by the samples' own rule
// (io/intake-columns.ts usualCoordinateColumn), so a header the samples reader takes is taken there too.
import { describe, expect, it } from 'vitest';
import { findUsualColumn } from '../../src/cli/common.ts';
import { readSamples } from '../../src/io/intake.ts';

const HEADERS: string[][] = [
  ['Easting (m)', 'Northing (m)', 'Pb'],
  ['Pb', 'LON', 'Lat'],
  ['id', 'utm_e', 'utm_n', 'Pb'],
  ['x_coord', 'y_coord', 'Pb'],
  ['Longitude', 'Latitude', 'easting', 'northing', 'Pb'],
  ['Sample ID', 'X', 'Y', 'Pb'],
];

function csv(header: string[]): string {
  const geographic = header.some((h) => /^(lon|longitude)$/i.test(h));
  const rows = Array.from({ length: 12 }, (_, i) => header.map((h) => {
    if (/pb/i.test(h)) return String(10 + ((i * 7) % 5));
    if (/id/i.test(h)) return `S${i}`;
    const north = /(lat|north|_n$|^y)/i.test(h);
    if (geographic && /^(lon|lat|longitude|latitude)$/i.test(h)) return String(north ? 51 + i * 0.001 : -1 + (i % 4) * 0.001);
    return String(north ? 5000 + i * 10 : 300 + (i % 4) * 10);
  }).join(','));
  return [header.join(','), ...rows].join('\n');
}

describe('findUsualColumn', () => {
  it('takes the columns the samples reader takes as x and y, for every header here', () => {
    for (const header of HEADERS) {
      const intake = readSamples(csv(header), { fileName: 'h.csv', value: 'Pb', ...(header.includes('LON') || header.includes('Longitude') ? {} : { crs: 'local' }) });
      expect([header[findUsualColumn(header, undefined, 'x')], header[findUsualColumn(header, undefined, 'y')]], header.join(',')).toEqual([intake.report.xColumn, intake.report.yColumn]);
    }
  });

  it('prefers the samples\' own column name when the file has it, and says -1 when no coordinate is there', () => {
    expect(findUsualColumn(['E', 'N', 'x'], 'E', 'x')).toBe(0);
    expect(findUsualColumn(['a', 'b'], undefined, 'x')).toBe(-1);
    expect(findUsualColumn(['a', 'utm_n'], undefined, 'y')).toBe(1);
  });
});
