/**
 * Sample files the browser tests feed through the file input: a small projected grid of samples
 * (for the colour read-back), a hostile file, and a 500-sample file for timing. Seeded, so every run
 * sees the same numbers.
 */
import { createRandom } from '../src/core/shared/random.ts';

/**
 * 25 samples on a 5 × 5 layout, 40 m apart, in WGS 84 / UTM zone 33N (EPSG:32633) about 3.7° west of
 * the zone's central meridian, so grid north and map north differ by about 2.8°. Every sample sits on
 * a cell centre of a 5 m grid (coordinates = 5k + 2.5), so with a zero-nugget model the cell holding
 * a sample has exactly the sample's value.
 */
export function projectedGridCsv(): { text: string; values: Map<string, number> } {
  const rnd = createRandom(20240611);
  const x0 = 240002.5; // 5k + 2.5
  const y0 = 5375002.5;
  const lines = ['sample,easting,northing,zinc'];
  const values = new Map<string, number>();
  for (let j = 0; j < 5; j++) {
    for (let i = 0; i < 5; i++) {
      const id = `G${j}${i}`;
      // A smooth trend plus noise: neighbouring samples differ, values 20–140.
      const v = Math.round((40 + 12 * i + 9 * j + 25 * rnd.uniform()) * 10) / 10;
      values.set(id, v);
      lines.push(`${id},${x0 + 40 * i},${y0 + 40 * j},${v}`);
    }
  }
  return { text: lines.join('\n') + '\n', values };
}

/** Markup and script in column names, IDs and values. Nothing in it may run or become an element. */
export function hostileCsv(): string {
  return [
    'name<img src=x onerror="window.__pwned=1">,lon,lat,"lead <script>window.__pwned=2</script>",<b>note</b>',
    '"<script>window.__pwned=3</script>",11.2480,48.4990,120,"<img src=x onerror=alert(1)>"',
    '"<iframe src=javascript:alert(2)>",11.2490,48.4995,85,"<svg onload=alert(3)>"',
    'plain-3,11.2500,48.5000,"<b onmouseover=alert(4)>60</b>",ok',
    'plain-4,11.2510,48.4992,45,"</td></tr></table><h1 id=injected>x</h1>"',
    'plain-5,11.2495,48.5005,150,"javascript:alert(5)"',
    'plain-6,11.2475,48.5002,95,"&lt;escaped&gt;"',
    'plain-7,11.2505,48.4988,70,"{@html x}"',
  ].join('\n') + '\n';
}

/**
 * 500 samples of a smooth field in a 1 km square of UTM zone 32N, with two samples pinning the
 * extent to 2.5 … 997.5 m so a 5 m cell gives a 200 × 200 grid.
 */
export function fiveHundredCsv(): string {
  const rnd = createRandom(500);
  const lines = ['id,x,y,nitrate'];
  const ox = 670000;
  const oy = 5370000;
  const field = (x: number, y: number) => 30 + 10 * Math.sin(x / 160) + 8 * Math.cos(y / 210) + 0.01 * x;
  const pin = [[2.5, 2.5], [997.5, 997.5]];
  for (let k = 0; k < 500; k++) {
    const [x, y] = k < 2 ? pin[k] : [5 + 990 * rnd.uniform(), 5 + 990 * rnd.uniform()];
    const v = field(x, y) + 1.5 * rnd.normal();
    lines.push(`S${k + 1},${(ox + x).toFixed(2)},${(oy + y).toFixed(2)},${v.toFixed(2)}`);
  }
  return lines.join('\n') + '\n';
}

/**
 * 40 samples on a field site grid in local coordinates (x 0–200, y 0–120, no CRS, columns x and y):
 * an 8 × 5 layout about 25 apart, each moved a little. Every coordinate is an odd whole number, so
 * with a 2-unit cell every sample sits on a cell centre and, under a zero-nugget model, the cell
 * holding it has exactly its value. Values are a smooth trend plus noise (about 20–120).
 */
export function localGridCsv(): { text: string; values: Map<string, number> } {
  const rnd = createRandom(20261203);
  const lines = ['plot,x,y,phosphorus'];
  const values = new Map<string, number>();
  const odd = (v: number) => 2 * Math.round((v - 1) / 2) + 1;
  for (let j = 0; j < 5; j++) {
    for (let i = 0; i < 8; i++) {
      const id = `P${j}${i}`;
      const x = odd(12 + 25 * i + 8 * (rnd.uniform() - 0.5));
      const y = odd(10 + 25 * j + 8 * (rnd.uniform() - 0.5));
      const v = Math.round((30 + 0.3 * x + 0.25 * y + 15 * Math.sin(x / 30) + 12 * rnd.uniform()) * 10) / 10;
      values.set(id, v);
      lines.push(`${id},${x},${y},${v}`);
    }
  }
  return { text: lines.join('\n') + '\n', values };
}

/** A boundary around the local site grid, in the same local x, y (GeoJSON in form, no CRS). */
export function localBoundaryGeoJson(): string {
  return JSON.stringify({
    type: 'Feature', properties: { name: 'site fence' },
    geometry: { type: 'Polygon', coordinates: [[[-1, -1], [203, -1], [203, 123], [100, 131], [-1, 123], [-1, -1]]] },
  });
}

/**
 * The invented demo samples with a second analyte beside lead: an INVENTED zinc column, 1.8 × lead +
 * 40 plus seeded noise (so it follows the same pattern with its own spread), for the several-analyte
 * browser test. Nothing in it describes a real site.
 */
export function leadZincCsv(demoText: string): string {
  const rnd = createRandom(1313);
  const lines = demoText.replace(/\r\n/g, '\n').trimEnd().split('\n');
  const head = lines[0].split(',');
  const lead = head.indexOf('Pb (mg/kg)');
  if (lead < 0) throw new Error('The demo samples have no "Pb (mg/kg)" column.');
  const out = [[...head.slice(0, lead + 1), 'Zn (mg/kg)', ...head.slice(lead + 1)].join(',')];
  for (const line of lines.slice(1)) {
    const cells = line.split(',');
    const pb = Number(cells[lead]);
    // Lead below its detection limit: zinc below its own.
    const zn = cells[lead].startsWith('<') ? '<20' : (Math.max(21, 1.8 * pb + 40 + 25 * rnd.normal())).toFixed(1);
    out.push([...cells.slice(0, lead + 1), zn, ...cells.slice(lead + 1)].join(','));
  }
  return out.join('\n') + '\n';
}
