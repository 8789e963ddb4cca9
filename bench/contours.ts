// Contour lines for the map (src/ui/map/contour-lines.ts): isolines of a smooth wave surface at about
// eight round levels plus an action level, on square grids in local coordinates (no projection) and in
// UTM zone 33 (each vertex through the inverse projection to latitude/longitude). Median of 5 runs.
import { mapContours } from '../src/ui/map/contour-lines.ts';
import { LOCAL_CRS } from '../src/io/crs.ts';
import type { Grid } from '../src/core/geometry/grid.ts';
import type { Row } from './common.ts';

function wave(n: number): { grid: Grid; values: Float64Array } {
  const grid: Grid = { x0: 500000, y0: 6000000, cell: 10, nx: n, ny: n };
  const values = new Float64Array(n * n);
  for (let j = 0; j < n; j++) {
    for (let i = 0; i < n; i++) values[j * n + i] = 40 + 30 * Math.sin(i / (n / 9)) * Math.cos(j / (n / 7));
  }
  return { grid, values };
}

export async function runContoursBench(o: { quick: boolean }): Promise<Row[]> {
  const rows: Row[] = [];
  for (const n of o.quick ? [100, 300] : [100, 300, 600]) {
    const { grid, values } = wave(n);
    for (const crs of [LOCAL_CRS, 'EPSG:32633']) {
      const times: number[] = [];
      let lines = 0;
      for (let r = 0; r < 5; r++) {
        const t0 = performance.now();
        const c = mapContours(grid, values, crs, 55);
        times.push((performance.now() - t0) / 1000);
        lines = c.reduce((a, l) => a + l.lines.length, 0);
      }
      times.sort((a, b) => a - b);
      rows.push({ name: `map contour lines, ${crs === LOCAL_CRS ? 'local x, y' : 'UTM to lat/lon'}`, n: n * n, seconds: times[2], note: `${n} × ${n} cells, ${lines} lines` });
    }
  }
  return rows;
}
