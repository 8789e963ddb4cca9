/**
 * Reads a boundary GeoJSON for a command and reports it: the polygons, their area in the working
 * CRS (shoelace formula, holes subtracted) and which samples lie outside.
 */
import { polygonsArea } from '../core/geometry/polygon.ts';
import { GapwiseError } from '../core/shared/errors.ts';
import { pointInPolygons, projectPolygons, readPolygons, type Polygon } from '../io/boundary.ts';
import type { IntakeResult } from '../io/types.ts';
import { sampleId } from '../io/sample-table.ts';
import { printWarnings, readText, type CliIo } from './common.ts';

export interface BoundaryReport {
  fileName: string;
  polygons: Array<{ feature: number; name: string; vertices: number; holes: number; areaSquareMetres: number }>;
  /** Total area (square metres of the working CRS). */
  areaSquareMetres: number;
  areaHectares: number;
  samplesInside: number;
  samplesOutside: number;
  /** IDs of the samples outside (at most 50). */
  outsideIds: string[];
}

/** Signed shoelace area of a ring (positive counter-clockwise). */

/** Reads `file` (GeoJSON, WGS 84 lon/lat), projects it to the samples' working CRS and reports it. */
export function readBoundaryFile(io: CliIo, file: string, intake: IntakeResult): { polygons: Polygon[]; report: BoundaryReport } {
  const text = readText(io, file);
  let projected: Polygon[];
  try {
    projected = projectPolygons(readPolygons(text, file), intake.report.crs.work);
  } catch (e) {
    if (e instanceof GapwiseError && e.place.file === undefined) e.place.file = file;
    throw e;
  }
  const { x, y } = intake.samples;
  const outsideIds: string[] = [];
  let outside = 0;
  for (let i = 0; i < x.length; i++) {
    if (!pointInPolygons(x[i], y[i], projected)) {
      outside++;
      if (outsideIds.length < 50) outsideIds.push(sampleId(intake.table, i));
    }
  }
  if (outside > 0) {
    printWarnings(io, [`${outside} of ${x.length} samples lie outside the boundary in ${file}${outsideIds.length ? ` (${outsideIds.slice(0, 10).join(', ')}${outside > 10 ? ', ...' : ''})` : ''}.`]);
  }
  const polygons = projected.map((p) => ({
    feature: p.feature,
    name: p.properties.name ?? '',
    vertices: p.rings[0].length,
    holes: p.rings.length - 1,
    areaSquareMetres: Math.round(polygonsArea([p.rings])),
  }));
  const area = polygons.reduce((s, p) => s + p.areaSquareMetres, 0);
  return {
    polygons: projected,
    report: {
      fileName: file,
      polygons,
      areaSquareMetres: area,
      areaHectares: Math.round(area / 100) / 100,
      samplesInside: x.length - outside,
      samplesOutside: outside,
      outsideIds,
    },
  };
}
