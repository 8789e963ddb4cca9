/**
 * Writes the INVENTED demo scenario in data-demo/: topsoil lead readings at a fictional former works
 * yard ("Wrenfallow Works yard (invented)") that is being redeveloped for housing.
 *
 * Nothing here is measured. The site, its name, its outline and every reading are made up; the
 * coordinates (around 48.5° N, 11.25° E) were picked as a plausible mid-latitude spot and describe no
 * real site. The readings come from a seeded simulation:
 *   ln Pb(s) = μ + hotspots(s) − clean-fill dip(s) + Z(s) + ε,
 * Z a zero-mean Gaussian field with a Matérn ν = 3/2 covariance (sill 0.30, scale 45 m; Rasmussen &
 * Williams 2006, eq. 4.17) and ε independent
 * measurement noise (sd 0.12), both drawn by src/core/simulation/simulate.ts (Cholesky factor of the covariance
 * matrix). Hotspots are Gaussian bumps in log space (an old workshop and a spoil
 * heap); a strip of imported clean topsoil gives a few readings under the 5 mg/kg detection limit,
 * written "<5". One location was sampled twice (a field duplicate with a different reading).
 *
 * A covariate of the mean, also invented: the distance from each sample to the old workshop (the
 * centre of the larger hotspot), in metres, in lead-topsoil-covariates.csv (the same readings with a
 * `workshop_dist_m` column), and the same distance on a 5 m lattice in UTM zone 32N
 * (workshop-distance.tif, Float32, cell centres), for `gapwise grid --covariate-raster`.
 *
 * Run `npx tsx scripts/make-demo-data.ts [folder]` (default data-demo/); the output is the same on every
 * run (seeded).
 */
import { writeFileSync, mkdirSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import proj4 from 'proj4';
import { createRandom } from '../src/core/shared/random.ts';
import { simulateField } from '../src/core/simulation/simulate.ts';
import type { CovarianceModel } from '../src/core/covariance/model.ts';
import { bandsGeoTiff } from '../src/io/geotiff.ts';

const SEED = 20240711;
const NAME = 'Wrenfallow Works yard (invented)';
const CENTRE = { lon: 11.25, lat: 48.5 };
const UTM = 'EPSG:32632';
const DETECTION_LIMIT = 5;
const ACTION_LEVEL = 200;
const CAUTION = 'Screening only: results that feed remediation or safety decisions need a licensed professional and local regulation.';

const here = dirname(fileURLToPath(import.meta.url));
// An optional argument writes elsewhere (the tests regenerate into a temporary folder and compare).
const outDir = process.argv[2] ? resolve(process.argv[2]) : resolve(here, '..', 'data-demo');

proj4.defs(UTM, '+proj=utm +zone=32 +datum=WGS84 +units=m +no_defs');
const toUtm = proj4('EPSG:4326', UTM);
const [cx, cy] = toUtm.forward([CENTRE.lon, CENTRE.lat]);

/** Site outline in local metres (east, north) about the centre; counter-clockwise. */
const OUTLINE: Array<[number, number]> = [
  [-200, -150], [195, -152], [208, -20], [204, 95], [150, 152], [-60, 148], [-190, 150], [-207, 10],
];

function inside(px: number, py: number, poly: Array<[number, number]>): boolean {
  let c = false;
  for (let i = 0, j = poly.length - 1; i < poly.length; j = i++) {
    const [xi, yi] = poly[i];
    const [xj, yj] = poly[j];
    if ((yi > py) !== (yj > py) && px < ((xj - xi) * (py - yi)) / (yj - yi) + xi) c = !c;
  }
  return c;
}

/** Distance from a point to the outline (for a margin inside the fence). */
function distanceToOutline(px: number, py: number): number {
  let best = Infinity;
  for (let i = 0, j = OUTLINE.length - 1; i < OUTLINE.length; j = i++) {
    const [ax, ay] = OUTLINE[j];
    const [bx, by] = OUTLINE[i];
    const dx = bx - ax;
    const dy = by - ay;
    const t = Math.max(0, Math.min(1, ((px - ax) * dx + (py - ay) * dy) / (dx * dx + dy * dy)));
    best = Math.min(best, Math.hypot(px - ax - t * dx, py - ay - t * dy));
  }
  return best;
}

const rng = createRandom(SEED);

// Layout: a jittered grid (about 28 m × 30 m), as a site investigation would lay out, plus a few
// extra points near the workshop, where a walkover found stained ground.
const local: Array<[number, number]> = [];
for (let gy = -135; gy <= 140; gy += 30) {
  for (let gx = -190; gx <= 200; gx += 28) {
    const px = gx + (rng.uniform() - 0.5) * 12;
    const py = gy + (rng.uniform() - 0.5) * 12;
    if (inside(px, py, OUTLINE) && distanceToOutline(px, py) > 4) local.push([px, py]);
  }
}
while (local.length < 149) {
  const px = -110 + (rng.uniform() - 0.5) * 90;
  const py = 60 + (rng.uniform() - 0.5) * 80;
  if (inside(px, py, OUTLINE) && distanceToOutline(px, py) > 4) local.push([px, py]);
}
if (local.length > 149) local.length = 149;
const n = local.length;

// Gaussian field at the sample points: Matérn 3/2 structure plus measurement noise (nugget 0.12²).
const field: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.12 * 0.12 }, { type: 'matern', sill: 0.3, scale: 45, nu: 1.5 }],
  trend: 'constant',
  transform: 'none',
};
const gauss = simulateField(field, local.map((p) => p[0]), local.map((p) => p[1]), { seed: SEED + 14, mean: 0 }).values;

function bump(px: number, py: number, bx: number, by: number, width: number): number {
  return Math.exp(-((px - bx) ** 2 + (py - by) ** 2) / (2 * width * width));
}

const MU = Math.log(55);
const values: number[] = [];
for (let i = 0; i < n; i++) {
  const [px, py] = local[i];
  const log = MU
    + 4.1 * bump(px, py, -110, 60, 30) // old workshop
    + 1.3 * bump(px, py, 120, -75, 32) // spoil heap
    - 4.3 * bump(px, py, 185, 80, 35) // imported clean topsoil by the north-east gate
    + gauss[i];
  values.push(Math.exp(log));
}

// A field duplicate: the sample nearest the workshop centre was taken twice.
let dupOf = 0;
let dupDist = Infinity;
for (let i = 0; i < n; i++) {
  const d = Math.hypot(local[i][0] + 80, local[i][1] - 40);
  if (d < dupDist) { dupDist = d; dupOf = i; }
}
const dupValue = values[dupOf] * Math.exp(0.25 + 0.1 * rng.normal());

function reading(v: number): string {
  if (v < DETECTION_LIMIT) return `<${DETECTION_LIMIT}`;
  return v < 100 ? v.toFixed(1) : String(Math.round(v));
}

// Order samples as a survey would: row by row from the south, west to east.
const order = Array.from({ length: n }, (_, i) => i).sort((a, b) => {
  const ra = Math.round(local[a][1] / 30);
  const rb = Math.round(local[b][1] / 30);
  return ra !== rb ? ra - rb : local[a][0] - local[b][0];
});

const toLonLat = (px: number, py: number): [number, number] => {
  const [lon, lat] = toUtm.inverse([cx + px, cy + py]);
  return [Number(lon.toFixed(7)), Number(lat.toFixed(7))];
};

/** The invented old workshop (centre of the larger hotspot), local metres. */
const WORKSHOP: [number, number] = [-110, 60];
const workshopDistance = (px: number, py: number): number => Math.hypot(px - WORKSHOP[0], py - WORKSHOP[1]);

const lines = ['Sample ID,Longitude,Latitude,Pb (mg/kg),Notes,Site'];
const covariateLines = ['Sample ID,Longitude,Latitude,Pb (mg/kg),workshop_dist_m,Notes,Site'];
let count = 0;
let nonDetects = 0;
let max = 0;
let min = Infinity;
const id = (k: number): string => `WF-${String(k).padStart(3, '0')}`;
for (const i of order) {
  const [lon, lat] = toLonLat(local[i][0], local[i][1]);
  const r = reading(values[i]);
  if (r.startsWith('<')) nonDetects++;
  else { max = Math.max(max, values[i]); min = Math.min(min, values[i]); }
  count++;
  const distance = workshopDistance(local[i][0], local[i][1]).toFixed(1);
  lines.push(`${id(count)},${lon},${lat},${r},${r.startsWith('<') ? 'lab reports less than the detection limit' : ''},${NAME}`);
  covariateLines.push(`${id(count)},${lon},${lat},${r},${distance},${r.startsWith('<') ? 'lab reports less than the detection limit' : ''},${NAME}`);
  if (i === dupOf) {
    count++;
    lines.push(`${id(count)},${lon},${lat},${reading(dupValue)},field duplicate of ${id(count - 1)},${NAME}`);
    covariateLines.push(`${id(count)},${lon},${lat},${reading(dupValue)},${distance},field duplicate of ${id(count - 1)},${NAME}`);
  }
}

// The scenario must look like what the README promises; stop loudly if a change breaks that.
const problems: string[] = [];
if (nonDetects < 2 || nonDetects > 6) problems.push(`${nonDetects} non-detects (want 2 to 6)`);
if (max < 900 || max > 2200) problems.push(`maximum ${max.toFixed(0)} mg/kg (want about 1,500)`);
if (count < 140 || count > 160) problems.push(`${count} rows (want about 150)`);
if (problems.length) throw new Error(`The demo scenario drifted: ${problems.join('; ')}.`);

mkdirSync(outDir, { recursive: true });
writeFileSync(resolve(outDir, 'lead-topsoil.csv'), `${lines.join('\n')}\n`);
writeFileSync(resolve(outDir, 'lead-topsoil-covariates.csv'), `${covariateLines.join('\n')}\n`);

// The workshop distance on a 5 m lattice in UTM zone 32N covering the site with a 20 m margin; the
// lattice's corner on whole multiples of 5 m.
const RASTER_CELL = 5;
const rx0 = Math.floor((cx - 230) / RASTER_CELL) * RASTER_CELL;
const ry0 = Math.ceil((cy + 175) / RASTER_CELL) * RASTER_CELL;
const rnx = Math.ceil((cx + 230 - rx0) / RASTER_CELL);
const rny = Math.ceil((ry0 - (cy - 175)) / RASTER_CELL);
const distanceBand = new Float32Array(rnx * rny);
for (let j = 0; j < rny; j++) {
  for (let i = 0; i < rnx; i++) {
    const px = rx0 + (i + 0.5) * RASTER_CELL - cx;
    const py = ry0 - (j + 0.5) * RASTER_CELL - cy;
    distanceBand[j * rnx + i] = workshopDistance(px, py);
  }
}
const raster = bandsGeoTiff({
  grid: { x0: rx0, y0: ry0, cell: RASTER_CELL, nx: rnx, ny: rny },
  bands: [distanceBand], names: ['workshop_dist_m (m)'], workCrs: UTM,
  title: `Distance to the old workshop of ${NAME}, metres: an invented covariate for the Gapwise demo.`,
  // A fixed Software tag, so that a new release does not change the demo file's bytes.
  software: 'Gapwise demo data',
});
writeFileSync(resolve(outDir, 'workshop-distance.tif'), raster.bytes);

const ring = [...OUTLINE, OUTLINE[0]].map(([px, py]) => toLonLat(px, py));
const boundary = {
  type: 'FeatureCollection',
  features: [{
    type: 'Feature',
    properties: {
      name: NAME,
      invented: true,
      note: 'Invented site outline for the Gapwise demo; it describes no real place.',
    },
    geometry: { type: 'Polygon', coordinates: [ring] },
  }],
};
// One [lon, lat] pair per line keeps the file readable.
const boundaryText = JSON.stringify(boundary, null, 2).replace(/\[\s+(-?[\d.]+),\s+(-?[\d.]+)\s+\]/g, '[$1, $2]');
writeFileSync(resolve(outDir, 'site-boundary.geojson'), `${boundaryText}\n`);

const scenario = {
  name: NAME,
  invented: true,
  valueColumn: 'Pb (mg/kg)',
  unit: 'mg/kg',
  actionLevel: ACTION_LEVEL,
  actionLevelNote: 'US EPA 2024 residential soil lead screening level (200 mg/kg): a screening value, not a cleanup standard.',
  detectionLimit: DETECTION_LIMIT,
  samplesFile: 'lead-topsoil.csv',
  boundaryFile: 'site-boundary.geojson',
  crs: 'EPSG:4326',
  description: 'An invented former works yard, about 400 m × 300 m, being redeveloped for housing. '
    + `${count} topsoil (0–15 cm) lead readings in mg/kg, generated by scripts/make-demo-data.ts from a seeded `
    + 'log-Gaussian simulation with two hotspots (an old workshop and a spoil heap), a strip of clean imported '
    + `topsoil with readings below the ${DETECTION_LIMIT} mg/kg detection limit, and one field duplicate. `
    + 'The site, its name and every reading are made up.',
  caution: CAUTION,
};
writeFileSync(resolve(outDir, 'scenario.json'), `${JSON.stringify(scenario, null, 2)}\n`);

console.log(`Wrote ${count} rows (${nonDetects} non-detects, 1 duplicate location, detected range ${min.toFixed(1)}–${max.toFixed(0)} mg/kg, `
  + `${values.filter((v) => v > ACTION_LEVEL).length} of ${n} locations above ${ACTION_LEVEL} mg/kg) to ${outDir}.`);
