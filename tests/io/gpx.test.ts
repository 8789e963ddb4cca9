import { describe, expect, it } from 'vitest';
import { suggestionsToGpx, waypointName } from '../../src/io/gpx.ts';
import { escapeText } from '../../src/io/markup.ts';
import type { ExportableDesign } from '../../src/io/suggestions-export.ts';
import { CAUTION } from '../../src/core/shared/caution.ts';
import { SOFTWARE } from '../../src/core/shared/version.ts';

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
      { rank: 1, x: 500010, y: 5400020, lon: 15.0001234567, lat: 48.7523456789, benefit: 512.25, mean: 180.5, sd: 35.1, pExceed: 0.2912 },
      { rank: 2, x: 500110, y: 5400120, lon: -179.5, lat: -33.25, benefit: 300, mean: 220, sd: 30, pExceed: 0.74 },
    ],
    ...overrides,
  };
}

/** Child element names of the first element `parent` (a flat scan: enough for the shallow GPX we write). */
function childNames(xml: string, parent: string, occurrence = 0): string[] {
  const re = new RegExp(`<${parent}[\\s>][\\s\\S]*?</${parent}>`, 'g');
  const block = [...xml.matchAll(re)][occurrence][0];
  const inner = block.slice(block.indexOf('>') + 1, block.lastIndexOf('<'));
  const names: string[] = [];
  let depth = 0;
  for (const m of inner.matchAll(/<(\/?)([A-Za-z][\w:]*)[^>]*?(\/?)>/g)) {
    if (m[1] === '/') { depth--; continue; }
    if (depth === 0) names.push(m[2]);
    if (m[3] !== '/') depth++;
  }
  return names;
}

/** True when `names` follow `order` (each name at most where the sequence allows it). */
function followsSequence(names: string[], order: string[]): boolean {
  let at = 0;
  for (const n of names) {
    const k = order.indexOf(n, at);
    if (k === -1) return false;
    at = k;
  }
  return true;
}

// GPX 1.1 schema (http://www.topografix.com/GPX/1/1/gpx.xsd), the xsd:sequence of each type:
const METADATA_TYPE = ['name', 'desc', 'author', 'copyright', 'link', 'time', 'keywords', 'bounds', 'extensions'];
const WPT_TYPE = ['ele', 'time', 'magvar', 'geoidheight', 'name', 'cmt', 'desc', 'src', 'link', 'sym', 'type', 'fix', 'sat',
  'hdop', 'vdop', 'pdop', 'ageofdgpsdata', 'dgpsid', 'extensions'];
const GPX_TYPE = ['metadata', 'wpt', 'rte', 'trk', 'extensions'];

describe('suggestionsToGpx', () => {
  const xml = suggestionsToGpx(design(), { name: 'Yard <north> & "east"', time: new Date(Date.UTC(2025, 2, 4, 9, 30, 15, 123)), unit: 'mg/kg' });

  it('suggestionsToGpx writes the GPX 1.1 root with version, creator and namespace', () => {
    expect(xml.startsWith(`<?xml version="1.0" encoding="UTF-8"?>\n<gpx version="1.1" creator="${SOFTWARE}" xmlns="http://www.topografix.com/GPX/1/1"`)).toBe(true);
    expect(SOFTWARE).toMatch(/^Gapwise \d+\.\d+\.\d+/);
    expect(xml.trimEnd().endsWith('</gpx>')).toBe(true);
  });

  it('suggestionsToGpx orders elements as the GPX 1.1 schema sequences gpxType, metadataType and wptType', () => {
    const top = childNames(xml, 'gpx');
    expect(top).toEqual(['metadata', 'wpt', 'wpt']);
    expect(followsSequence(top, GPX_TYPE)).toBe(true);
    const meta = childNames(xml, 'metadata');
    expect(meta).toEqual(['name', 'desc', 'time', 'bounds']);
    expect(followsSequence(meta, METADATA_TYPE)).toBe(true);
    for (const k of [0, 1]) {
      const wpt = childNames(xml, 'wpt', k);
      expect(wpt).toEqual(['name', 'cmt', 'desc', 'src', 'type']);
      expect(followsSequence(wpt, WPT_TYPE)).toBe(true);
    }
    // The checker itself rejects a wrong order.
    expect(followsSequence(['cmt', 'name'], WPT_TYPE)).toBe(false);
  });

  it('suggestionsToGpx puts the caution in the metadata desc and escapes text', () => {
    expect(xml).toContain('<name>Yard &lt;north&gt; &amp; &quot;east&quot;</name>');
    const desc = /<metadata>[\s\S]*?<desc>([\s\S]*?)<\/desc>/.exec(xml)![1];
    expect(desc).toContain(CAUTION.replace(/'/g, '&#39;'));
    expect(xml).toContain('<time>2025-03-04T09:30:15Z</time>');
  });

  it('suggestionsToGpx writes each waypoint\'s lat/lon (7 decimals), name and the values (4 digits) in the comment', () => {
    expect(xml).toContain('<wpt lat="48.7523457" lon="15.0001235">');
    expect(xml).toContain('<wpt lat="-33.25" lon="-179.5">');
    expect(xml).toContain('<name>S01</name>');
    expect(xml).toContain('<cmt>benefit 512.3; mean 180.5 mg/kg; sd 35.1 mg/kg; P(exceed 200 mg/kg) 0.291</cmt>');
    expect(xml).toContain('<bounds minlat="-33.25" minlon="-179.5" maxlat="48.7523457" maxlon="15.0001235"/>');
  });

  it('suggestionsToGpx leaves out values a coverage design has not and rejects missing lon/lat', () => {
    const cov = suggestionsToGpx(design({
      mode: 'coverage', threshold: null,
      suggestions: [{ rank: 1, x: 1, y: 2, lon: 10, lat: 50, benefit: 42, mean: null, sd: null, pExceed: null }],
    }), { time: new Date(0) });
    expect(cov).toContain('<cmt>benefit 42</cmt>');
    expect(() => suggestionsToGpx(design({ suggestions: [{ rank: 1, x: 1, y: 2, benefit: 1, mean: 1, sd: 1, pExceed: null }] }))).toThrow(/Suggestion 1 has longitude undefined/);
  });
});

describe('escapeText', () => {
  it('escapeText escapes the five special characters and drops the control characters XML 1.0 forbids', () => {
    expect(escapeText('a<b>&"c\'\u0001d')).toBe('a&lt;b&gt;&amp;&quot;c&#39;d');
  });
});

describe('waypointName', () => {
  it('waypointName pads ranks so names sort in rank order', () => {
    expect(waypointName(3, 10)).toBe('S03');
    expect(waypointName(7, 120)).toBe('S007');
  });
});
