/**
 * SurfaceLayer: a Leaflet grid layer that draws a surface computed on a working-CRS grid (UTM, a
 * national grid...) correctly placed on the web map, tile by tile.
 *
 * Each tile projects a coarse lattice of its pixels (every `latticeStep` px) to the working CRS and
 * interpolates inside (see ./tile-lookup.ts, where the pure part lives and is tested), then colours
 * every pixel by the nearest grid cell through the scale's lookup table. Tiles keep their lattice, so
 * new values (a band arriving from a worker), a new scale, domain or sd cut-off repaint the existing
 * tiles in place without projecting again (`repaint()`); only a new projection needs `redraw()`.
 * Transparency: outside the grid or mask, NaN values, and (with `hideAboveSd`) cells whose sd is
 * above that level. Written Leaflet's way: options with defaults, `createTile(coords, done)`, no
 * framework code; a Svelte component creates it and calls its setters.
 *
 * Two departures from Leaflet's tile defaults, both so that a finished layer shows exactly the
 * computed values: tiles are not faded in (Leaflet fires 'load' while the last tiles are still at
 * opacity 0, so a layer swapped in on 'load' showed lighter, half-faded rectangles), and each tile
 * reaches OVERLAP px past its right and bottom edges (at fractional zoom the scaled tiles otherwise
 * leave hairline seams where the background shows through).
 */
import L from 'leaflet';
import type { Grid } from '../../core/geometry/grid.ts';
import { buildLut, type ScaleName } from './colour-scales.ts';
import { buildTileLattice, paintTile, readCell, type CellReading, type TileLattice, type ToWork } from './tile-lookup.ts';
import { provideTestHook, type TestHook } from '../state/test-hook.ts';

export type SurfaceValues = Float32Array | Float64Array;

export interface SurfaceLayerOptions extends L.GridLayerOptions {
  /** Grid geometry (and mask) of the values. */
  grid?: Grid | null;
  /** One value per cell, row-major from the top; NaN cells are not drawn. */
  values?: SurfaceValues | null;
  /** Per-cell sd, for hideAboveSd and the cursor readout. */
  sd?: SurfaceValues | null;
  /** Leave cells whose sd is above this level transparent; null draws every cell. */
  hideAboveSd?: number | null;
  /** [longitude, latitude] → working-CRS [x, y] (the inverse of the grid's placement). */
  toWork?: ToWork | null;
  /** Colour scale name (./colour-scales.ts). */
  scale?: ScaleName;
  /** Values at the two ends of the scale. */
  domain?: [number, number];
  /** Lattice spacing in pixels (smaller = more projections per tile). */
  latticeStep?: number;
  /** Colours spaced by ln(value) (skewed data); the domain must be above 0. */
  log?: boolean;
}

const DEFAULTS: SurfaceLayerOptions = {
  grid: null,
  values: null,
  sd: null,
  hideAboveSd: null,
  toWork: null,
  scale: 'loam',
  domain: [0, 1],
  latticeStep: 16,
  log: false,
  opacity: 0.8,
  className: 'gapwise-surface',
  updateWhenZooming: false,
  keepBuffer: 1,
};

interface TileRecord {
  el: HTMLElement;
  coords: L.Coords;
  current?: boolean;
  loaded?: number;
  active?: boolean;
}

/** A tile waiting to be painted: the next lattice row, and for a new tile its coordinates and Leaflet's callback. */
interface PaintJob {
  row: number;
  coords?: L.Coords;
  done?: L.DoneCallback;
}

/**
 * Longest stretch of painting in one task, ms: well under the 50 ms a task may take before the page
 * feels held (a lattice row of a 256 px tile is 16 × 257 pixels, well under a millisecond once optimised).
 */
const PAINT_TASK_BUDGET_MS = 12;

/** Pixels each tile reaches past its right and bottom edges (covers seams at fractional zoom). */
const OVERLAP = 1;

/** What the tests read back at a page position: the value drawn there and the cell centre. */
export interface SurfaceProbe {
  value: number;
  sd: number | null;
  /** Page position of the centre of the cell holding the point. */
  centreX: number;
  centreY: number;
  domain: [number, number];
  scale: ScaleName;
  opacity: number;
  /** True when colours are spaced by ln(value). */
  log: boolean;
}

/** The cursor readout: the value (mean, sd or probability) and the sd of the cell under a point. */
export type SurfaceReading = CellReading;

export class SurfaceLayer extends L.GridLayer {
  declare options: SurfaceLayerOptions;
  private lut: Uint8ClampedArray;
  private lattices = new WeakMap<HTMLCanvasElement, TileLattice>();
  private contexts = new WeakMap<HTMLCanvasElement, CanvasRenderingContext2D>();
  private images = new WeakMap<HTMLCanvasElement, ImageData>();

  constructor(options: SurfaceLayerOptions = {}) {
    super(options);
    this.lut = buildLut(this.options.scale ?? 'loam');
    // The layer that last finished loading answers the tests' read-back (see probe()).
    this.on('load', () => provideTestHook({ surfaceProbe: (x: number, y: number) => this.probe(x, y) } as Partial<TestHook>));
  }

  /**
   * The value this layer draws at a page position (CSS px), with the page position of that cell's
   * centre, or null outside the drawn cells. For the browser tests' colour read-back.
   */
  probe(pageX: number, pageY: number): SurfaceProbe | null {
    const map = this._map;
    const { grid, values, sd, toWork } = this.options;
    if (!map || !grid || !values || !toWork) return null;
    const rect = map.getContainer().getBoundingClientRect();
    const ll = map.containerPointToLatLng(L.point(pageX - rect.left, pageY - rect.top));
    const c = readCell(grid, values, sd, toWork, ll.lng, ll.lat);
    if (!c) return null;
    // Cell centre back to the page: invert toWork numerically (two Newton steps on the map's own
    // pixel → working-CRS mapping, which is smooth over a cell).
    const cx = grid.x0 + (c.i + 0.5) * grid.cell, cy = grid.y0 - (c.j + 0.5) * grid.cell;
    let px = pageX - rect.left, py = pageY - rect.top;
    const at = (qx: number, qy: number): [number, number] => {
      const q = map.containerPointToLatLng(L.point(qx, qy));
      return toWork(q.lng, q.lat);
    };
    for (let it = 0; it < 3; it++) {
      const [x, y] = at(px, py);
      const [xr, yr] = at(px + 1, py);
      const [xd, yd] = at(px, py + 1);
      const a = xr - x, b = xd - x, cc = yr - y, d = yd - y;
      const det = a * d - b * cc;
      if (!(Math.abs(det) > 0)) break;
      const ex = cx - x, ey = cy - y;
      px += (d * ex - b * ey) / det;
      py += (-cc * ex + a * ey) / det;
    }
    return {
      value: c.value, sd: c.sd, centreX: rect.left + px, centreY: rect.top + py,
      domain: [...(this.options.domain ?? [0, 1])] as [number, number], scale: this.options.scale ?? 'loam',
      opacity: this.options.opacity ?? 1, log: this.options.log === true,
    };
  }

  /**
   * Leaflet calls this for each tile; the tile is projected and painted in later tasks (see
   * paintSoon) and handed to Leaflet when its last band is painted, so tiles appear one by one.
   */
  protected override createTile(coords: L.Coords, done: L.DoneCallback): HTMLElement {
    const canvas = document.createElement('canvas');
    const size = this.getTileSize();
    canvas.width = size.x + OVERLAP;
    canvas.height = size.y + OVERLAP;
    this.jobs.set(canvas, { row: 0, coords, done });
    this.paintSoon();
    return canvas;
  }

  /** Projects the tile's lattice (a few hundred inverse projections). */
  private prepareTile(canvas: HTMLCanvasElement, coords: L.Coords): TileLattice | undefined {
    const map = this._map;
    const toWork = this.options.toWork;
    if (!map || !toWork) return undefined;
    const size = this.getTileSize();
    const origin = coords.scaleBy(size);
    const lattice = buildTileLattice(origin.x, origin.y, size.x + OVERLAP, size.y + OVERLAP, this.options.latticeStep ?? 16,
      (px, py) => {
        const ll = map.unproject(L.point(px, py), coords.z);
        return [ll.lng, ll.lat];
      }, toWork);
    this.lattices.set(canvas, lattice);
    return lattice;
  }

  /**
   * Paints lattice rows [fromRow, toRow) of a tile into its kept image; `finish` puts the image on
   * the canvas (a tile is shown whole, never half painted). Returns false when there is nothing to
   * paint with (no lattice, grid or values): the tile is then cleared.
   */
  private paintRows(canvas: HTMLCanvasElement, fromRow: number, toRow: number, finish: boolean): boolean {
    const lattice = this.lattices.get(canvas);
    let ctx = this.contexts.get(canvas);
    if (!ctx) {
      // One context per tile, kept: creating a context is a good part of a tile's cost.
      ctx = canvas.getContext('2d', { willReadFrequently: true }) ?? undefined;
      if (!ctx) return false;
      this.contexts.set(canvas, ctx);
    }
    const { grid, values, sd, hideAboveSd, domain, log } = this.options;
    if (!lattice || !grid || !values) {
      ctx.clearRect(0, 0, canvas.width, canvas.height);
      return false;
    }
    let image = this.images.get(canvas);
    if (!image || image.width !== canvas.width || image.height !== canvas.height) {
      image = ctx.createImageData(canvas.width, canvas.height);
      this.images.set(canvas, image);
    }
    paintTile(lattice, { grid, values, sd, hideAboveSd, lut: this.lut, domain: domain ?? [0, 1], log }, image.data, fromRow, toRow);
    if (finish) ctx.putImageData(image, 0, 0);
    return true;
  }

  /**
   * Repaints the tiles on the map from their kept lattices (no projection): after new values (a
   * band from the worker pool written into the same array), a scale, domain or sd cut-off change.
   * A tile being painted starts again from its first row; 'repainted' fires when every tile is done.
   */
  repaint(): this {
    // Leaflet keeps its current tiles in `_tiles` (key → {el, coords, current}).
    const tiles = (this as unknown as { _tiles?: Record<string, TileRecord> })._tiles;
    if (!tiles) return this.redraw();
    for (const key of Object.keys(tiles)) {
      const el = tiles[key].el;
      if (!(el instanceof HTMLCanvasElement)) continue;
      const job = this.jobs.get(el);
      if (job) job.row = 0;
      else if (this.lattices.has(el)) this.jobs.set(el, { row: 0 });
    }
    if (this.jobs.size === 0) {
      // Nothing on the map to repaint: say so all the same (listeners wait for it).
      setTimeout(() => { if (this.jobs.size === 0) this.fire('repainted'); }, 0);
      return this;
    }
    this.paintSoon();
    return this;
  }

  /**
   * Tiles waiting to be painted (new ones carry Leaflet's `done` and their coordinates, to be
   * projected first), in the order asked, each with the next lattice row to paint.
   */
  private jobs = new Map<HTMLCanvasElement, PaintJob>();
  private scheduled = false;

  /**
   * Paints waiting tiles in tasks of at most PAINT_TASK_BUDGET_MS (a lattice row at a time), so no
   * task holds the page for long even while the painting code is not yet optimised by the engine.
   */
  private paintSoon(): void {
    if (this.scheduled || this.jobs.size === 0) return;
    this.scheduled = true;
    setTimeout(() => {
      this.scheduled = false;
      const started = performance.now();
      while (this.jobs.size > 0 && performance.now() - started < PAINT_TASK_BUDGET_MS) {
        const [canvas, job] = this.jobs.entries().next().value as [HTMLCanvasElement, PaintJob];
        try {
          // A tile Leaflet dropped (map moved, layer removed) is not painted; Leaflet ignores its late `done`.
          if (job.coords && canvas.isConnected) {
            // A new tile: project its lattice first (its own step of the budget).
            const coords = job.coords;
            job.coords = undefined;
            if (this.prepareTile(canvas, coords)) continue;
          }
          const lattice = this.lattices.get(canvas);
          const rows = lattice ? lattice.rows - 1 : 0;
          const last = job.row + 1 >= rows;
          const painted = canvas.isConnected && !job.coords && this.paintRows(canvas, job.row, job.row + 1, last);
          if (painted && !last) {
            job.row++;
            continue;
          }
          this.jobs.delete(canvas);
          job.done?.(undefined, canvas);
        } catch (error) {
          this.jobs.delete(canvas);
          job.done?.(error instanceof Error ? error : new Error(String(error)), canvas);
        }
      }
      if (this.jobs.size === 0) this.fire('repainted');
      else this.paintSoon();
    }, 0);
  }

  /**
   * New values (and optionally sd and grid). A new grid or array repaints; to show a band that was
   * written into the current array, call repaint().
   */
  setData(values: SurfaceValues | null, sd?: SurfaceValues | null, grid?: Grid | null): this {
    this.options.values = values;
    if (sd !== undefined) this.options.sd = sd;
    if (grid !== undefined) this.options.grid = grid;
    return this.repaint();
  }

  /** Colour scale and, optionally, the values at its two ends and whether colours follow ln(value). */
  setScale(scale: ScaleName, domain?: [number, number], log?: boolean): this {
    this.options.scale = scale;
    this.lut = buildLut(scale);
    if (domain) this.options.domain = domain;
    if (log !== undefined) this.options.log = log;
    return this.repaint();
  }

  /** Values at the two ends of the scale. */
  setDomain(domain: [number, number]): this {
    this.options.domain = domain;
    return this.repaint();
  }

  /** Hide cells whose sd is above `level` (null shows all). */
  setHideAboveSd(level: number | null): this {
    this.options.hideAboveSd = level;
    return this.repaint();
  }

  /** A new placement function: every tile must be projected again. */
  setToWork(toWork: ToWork | null): this {
    this.options.toWork = toWork;
    this.lattices = new WeakMap();
    return this.redraw();
  }

  /** The value and sd of the cell under a map position, or null (for the cursor readout). */
  valueAt(latlng: L.LatLngExpression): SurfaceReading | null {
    const { grid, values, sd, toWork } = this.options;
    if (!grid || !toWork) return null;
    const ll = L.latLng(latlng);
    return readCell(grid, values ?? null, sd, toWork, ll.lng, ll.lat);
  }
}

// Leaflet internals overridden on the prototype (they are not in its type declarations).
interface GridInternals {
  _map: (L.Map & { _fadeAnimated?: boolean }) | null;
  getTileSize(): L.Point;
}
const gridProto = L.GridLayer.prototype as unknown as Record<string, (...args: unknown[]) => unknown>;
const ownProto = SurfaceLayer.prototype as unknown as Record<string, (...args: unknown[]) => unknown>;

// Tiles are shown at full opacity when painted (no fade-in): 'load' then means what it says.
ownProto._tileReady = function (this: GridInternals, ...args: unknown[]) {
  const map = this._map;
  if (!map) return gridProto._tileReady.apply(this, args);
  const fade = map._fadeAnimated;
  map._fadeAnimated = false;
  try {
    return gridProto._tileReady.apply(this, args);
  } finally {
    map._fadeAnimated = fade;
  }
};

// Each tile reaches OVERLAP px past its edges (the canvas is that much larger, see createTile).
ownProto._initTile = function (this: GridInternals, ...args: unknown[]) {
  gridProto._initTile.apply(this, args);
  const tile = args[0] as HTMLElement;
  const size = this.getTileSize();
  tile.style.width = `${size.x + OVERLAP}px`;
  tile.style.height = `${size.y + OVERLAP}px`;
};

// Leaflet's way of declaring option defaults: on the prototype, inheriting GridLayer's.
SurfaceLayer.prototype.options = L.Util.extend(Object.create(L.GridLayer.prototype.options), DEFAULTS);

