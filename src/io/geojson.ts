/**
 * GeoJSON (RFC 7946) sample files: a FeatureCollection of Point or MultiPoint features whose
 * properties are the columns. Coordinates are WGS 84 longitude, latitude. Each feature is checked with
 * geojson-validation; a feature that fails is rejected with its number (from 1) and the reason, not
 * the file. Properties are kept in a Map, so that names like "__proto__" are names like any other.
 */
import * as gjv from 'geojson-validation';
import { GapwiseError } from '../core/shared/errors.ts';
import type { ReportEntry } from './types.ts';

/** One sample point from a feature (a MultiPoint gives one per position). */
export interface PointRecord {
  /** Feature number, counted from 1 in the order of the file. */
  feature: number;
  /** The feature's "id" member, when it has one. */
  id?: string;
  lon: number;
  lat: number;
  /** Properties as plain text ('' for null). */
  cells: Map<string, string>;
}

export interface PointFeatures {
  columns: string[];
  records: PointRecord[];
  entries: ReportEntry[];
  featureCount: number;
  /** A legacy "crs" member's name (not RFC 7946), when present. */
  legacyCrs?: string;
}

/** JSON.parse with a GapwiseError naming the line of a syntax error. */
export function parseJson(text: string, fileName: string): unknown {
  let t = text;
  if (t.charCodeAt(0) === 0xfeff) t = t.slice(1);
  if (t.trim() === '') throw new GapwiseError('bad-file', 'The file is empty; expected GeoJSON.', { file: fileName });
  try {
    return JSON.parse(t);
  } catch (e) {
    const msg = e instanceof Error ? e.message : String(e);
    const pos = /position (\d+)/.exec(msg);
    const offset = pos ? Number(pos[1]) : jsonErrorOffset(t);
    const row = offset >= 0 ? lineAt(t, offset) : undefined;
    const near = offset >= 0 ? t.slice(Math.max(0, offset - 20), offset + 20).replace(/\s+/g, ' ').trim() : '';
    // The line is in the error's place (said once, by whoever shows it), the text near it here.
    throw new GapwiseError('bad-file', `The file is not valid JSON${near ? ` (near ${JSON.stringify(near).replace(/[\u0000-\u001f\u007f-\u009f]/g, '?')})` : ''}; expected GeoJSON.`, { file: fileName, row, raw: near || undefined });
  }
}

function lineAt(text: string, offset: number): number {
  let line = 1;
  for (let i = 0; i < offset && i < text.length; i++) if (text.charCodeAt(i) === 10) line++;
  return line;
}

/**
 * Offset of the first JSON syntax error, or -1 when the text is valid JSON. A small iterative
 * scanner (no recursion, so deep nesting cannot overflow the stack); used only to point at the line.
 */
export function jsonErrorOffset(text: string): number {
  const n = text.length;
  let i = 0;
  const stack: string[] = [];
  // 'value' expects a value; 'key' a string key or '}' ; 'after' a ',' or closing bracket.
  let want: 'value' | 'key' | 'colon' | 'after' | 'value-or-close' | 'key-or-close' = 'value';
  const ws = () => {
    while (i < n && (text[i] === ' ' || text[i] === '\t' || text[i] === '\n' || text[i] === '\r')) i++;
  };
  const str = (): boolean => {
    i++;
    while (i < n) {
      const c = text[i];
      if (c === '"') {
        i++;
        return true;
      }
      if (c === '\\') {
        const e = text[i + 1];
        if (e === 'u') {
          if (!/^[0-9a-fA-F]{4}$/.test(text.slice(i + 2, i + 6))) return false;
          i += 6;
        } else if (e !== undefined && '"\\/bfnrt'.includes(e)) i += 2;
        else return false;
      } else if (c.charCodeAt(0) < 0x20) return false;
      else i++;
    }
    return false;
  };
  for (;;) {
    ws();
    if (i >= n) return stack.length === 0 && want === 'after' ? -1 : i;
    const c = text[i];
    if (want === 'value' || want === 'value-or-close') {
      if (want === 'value-or-close' && c === ']') {
        stack.pop();
        i++;
        want = 'after';
        continue;
      }
      if (c === '{') {
        stack.push('}');
        i++;
        want = 'key-or-close';
      } else if (c === '[') {
        stack.push(']');
        i++;
        want = 'value-or-close';
      } else if (c === '"') {
        if (!str()) return i;
        want = 'after';
      } else {
        const m = /^(?:-?(?:0|[1-9]\d*)(?:\.\d+)?(?:[eE][+-]?\d+)?|true|false|null)/.exec(text.slice(i, i + 400));
        if (!m) return i;
        i += m[0].length;
        want = 'after';
      }
    } else if (want === 'key' || want === 'key-or-close') {
      if (want === 'key-or-close' && c === '}') {
        stack.pop();
        i++;
        want = 'after';
      } else if (c === '"') {
        if (!str()) return i;
        want = 'colon';
      } else return i;
    } else if (want === 'colon') {
      if (c !== ':') return i;
      i++;
      want = 'value';
    } else {
      if (stack.length === 0) return i;
      const top = stack[stack.length - 1];
      if (c === ',') {
        i++;
        want = top === '}' ? 'key' : 'value';
      } else if (c === top) {
        stack.pop();
        i++;
        want = 'after';
      } else return i;
    }
  }
}

/** Property value as display text; objects become their JSON text. */
export function propertyText(v: unknown): string {
  if (v === null || v === undefined) return '';
  if (typeof v === 'string') return v;
  if (typeof v === 'number' || typeof v === 'boolean') return String(v);
  try {
    return JSON.stringify(v);
  } catch {
    return String(v);
  }
}

function isObject(v: unknown): v is Record<string, unknown> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

/** The first validation message geojson-validation gives for a value, or ''. */
export function validationProblem(value: unknown, check: (v: unknown, trace: true) => string[]): string {
  let r: unknown;
  try {
    r = check(value, true);
  } catch (e) {
    return e instanceof Error ? e.message : String(e);
  }
  if (Array.isArray(r)) return r.length ? String(r[0]) : '';
  return r === false ? 'is not valid GeoJSON' : '';
}

function typeName(v: unknown): string {
  if (Array.isArray(v)) return 'an array';
  if (isObject(v)) return typeof v.type === 'string' ? `a ${v.type.slice(0, 40)}` : 'an object without "type"';
  return `a ${typeof v}`;
}

/**
 * Reads the point features of a FeatureCollection. Throws GapwiseError 'bad-file' when the text is
 * not JSON or not a FeatureCollection; rejects (with an entry) features without a Point/MultiPoint
 * geometry or with invalid coordinates.
 */
export function readPointFeatures(text: string, fileName: string): PointFeatures {
  const obj = parseJson(text, fileName);
  const geometryType = isObject(obj) ? (obj.type === 'Feature' && isObject(obj.geometry) ? obj.geometry.type : obj.type) : undefined;
  if (geometryType === 'Polygon' || geometryType === 'MultiPolygon') {
    throw new GapwiseError('bad-file', `This GeoJSON is a ${geometryType}, not points: is it a boundary? Samples must be Point or MultiPoint features; choose this file as the boundary instead.`, { file: fileName });
  }
  if (!isObject(obj) || obj.type !== 'FeatureCollection') {
    throw new GapwiseError('bad-file', `The GeoJSON is ${typeName(obj)}; expected a FeatureCollection of Point or MultiPoint features.`, { file: fileName });
  }
  if (!Array.isArray(obj.features)) {
    throw new GapwiseError('bad-file', 'The FeatureCollection has no "features" array; expected a list of Point or MultiPoint features.', { file: fileName });
  }
  let legacyCrs: string | undefined;
  if (isObject(obj.crs) && isObject(obj.crs.properties) && typeof obj.crs.properties.name === 'string') {
    legacyCrs = obj.crs.properties.name;
  }
  const columns: string[] = [];
  const seen = new Set<string>();
  const records: PointRecord[] = [];
  const entries: ReportEntry[] = [];
  const features = obj.features as unknown[];
  const polygons: number[] = [];
  for (let i = 0; i < features.length; i++) {
    const f = features[i];
    const feature = i + 1;
    const id = isObject(f) && (typeof f.id === 'string' || typeof f.id === 'number') ? String(f.id) : undefined;
    const reject = (reason: string, field?: string, raw?: string) =>
      entries.push({ feature, ...(id !== undefined ? { id } : {}), field, raw, action: 'rejected', reason });
    if (!isObject(f) || f.type !== 'Feature') {
      reject(`is ${typeName(f)}, not a Feature`);
      continue;
    }
    const g = f.geometry;
    if (!isObject(g)) {
      reject('has no geometry', 'geometry');
      continue;
    }
    if (g.type !== 'Point' && g.type !== 'MultiPoint') {
      if (g.type === 'Polygon' || g.type === 'MultiPolygon') polygons.push(feature);
      reject(`has a ${String(g.type).slice(0, 40)} geometry; expected Point or MultiPoint`, 'geometry', String(g.type).slice(0, 40));
      continue;
    }
    const problem = validationProblem(g, g.type === 'Point' ? gjv.isPoint : gjv.isMultiPoint);
    const positions: unknown[] = g.type === 'Point' ? [g.coordinates] : Array.isArray(g.coordinates) ? g.coordinates : [];
    const good = positions.every((p) => Array.isArray(p) && p.length >= 2 && typeof p[0] === 'number' && typeof p[1] === 'number' && Number.isFinite(p[0]) && Number.isFinite(p[1]));
    if (problem || !good || positions.length === 0) {
      reject(`has invalid coordinates${problem ? ` (${problem})` : ''}; expected [longitude, latitude] numbers`, 'geometry', propertyText(g.coordinates).slice(0, 200));
      continue;
    }
    // JSON.parse makes "__proto__" an own property; Object.keys and a Map keep it a plain name.
    const props = isObject(f.properties) ? f.properties : null;
    const cells = new Map<string, string>();
    if (props) {
      for (const k of Object.keys(props)) {
        if (!seen.has(k)) {
          seen.add(k);
          columns.push(k);
        }
        cells.set(k, propertyText(props[k]));
      }
    }
    if (f.id !== undefined && !cells.has('id')) {
      cells.set('id', propertyText(f.id));
      if (!seen.has('id')) {
        seen.add('id');
        columns.unshift('id');
      }
    }
    for (const p of positions as number[][]) records.push({ feature, ...(id !== undefined ? { id } : {}), lon: p[0], lat: p[1], cells });
    if (positions.length > 1) {
      entries.push({ feature, ...(id !== undefined ? { id } : {}), field: 'geometry', action: 'changed', reason: `MultiPoint with ${positions.length} positions read as ${positions.length} samples with the same properties` });
    }
  }
  if (records.length === 0 && polygons.length > 0) {
    const which = polygons.length === features.length ? 'every feature is one' : `features ${polygons.slice(0, 12).join(', ')}${polygons.length > 12 ? ' and more' : ''}`;
    throw new GapwiseError('bad-file', `This GeoJSON holds polygons (${which}) and no points: is it a boundary? Samples must be Point or MultiPoint features; choose this file as the boundary instead.`, { file: fileName });
  }
  return { columns, records, entries, featureCount: features.length, legacyCrs };
}
