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
 */
import L from 'leaflet';
import type { Grid } from '../../core/grid.ts';
import { buildLut, type ScaleName } from './colour-scales.ts';
import { buildTileLattice, paintTile, readCell, type CellReading, type TileLattice, type ToWork } from './tile-lookup.ts';

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
  opacity: 0.8,
  className: 'gapwise-surface',
  updateWhenZooming: false,
  keepBuffer: 1,
};

interface TileRecord {
  el: HTMLElement;
  coords: L.Coords;
}

/** The cursor readout: the value (mean, sd or probability) and the sd of the cell under a point. */
export type SurfaceReading = CellReading;

export class SurfaceLayer extends L.GridLayer {
  declare options: SurfaceLayerOptions;
  private lut: Uint8ClampedArray;
  private lattices = new WeakMap<HTMLCanvasElement, TileLattice>();

  constructor(options: SurfaceLayerOptions = {}) {
    super(options);
    this.lut = buildLut(this.options.scale ?? 'loam');
  }

  /** Leaflet calls this for each tile; the tile is painted on the next tick so tiles appear one by one. */
  protected override createTile(coords: L.Coords, done: L.DoneCallback): HTMLElement {
    const canvas = document.createElement('canvas');
    const size = this.getTileSize();
    canvas.width = size.x;
    canvas.height = size.y;
    setTimeout(() => {
      try {
        this.prepareTile(canvas, coords, size);
        done(undefined, canvas);
      } catch (error) {
        done(error instanceof Error ? error : new Error(String(error)), canvas);
      }
    }, 0);
    return canvas;
  }

  private prepareTile(canvas: HTMLCanvasElement, coords: L.Coords, size: L.Point): void {
    const map = this._map;
    const toWork = this.options.toWork;
    if (!map || !toWork) return;
    const origin = coords.scaleBy(size);
    const lattice = buildTileLattice(origin.x, origin.y, size.x, size.y, this.options.latticeStep ?? 16,
      (px, py) => {
        const ll = map.unproject(L.point(px, py), coords.z);
        return [ll.lng, ll.lat];
      }, toWork);
    this.lattices.set(canvas, lattice);
    this.paint(canvas);
  }

  private paint(canvas: HTMLCanvasElement): void {
    const lattice = this.lattices.get(canvas);
    const ctx = canvas.getContext('2d');
    if (!ctx) return;
    const { grid, values, sd, hideAboveSd, domain } = this.options;
    if (!lattice || !grid || !values) {
      ctx.clearRect(0, 0, canvas.width, canvas.height);
      return;
    }
    const image = ctx.createImageData(canvas.width, canvas.height);
    paintTile(lattice, { grid, values, sd, hideAboveSd, lut: this.lut, domain: domain ?? [0, 1] }, image.data);
    ctx.putImageData(image, 0, 0);
  }

  /**
   * Repaints the tiles on the map from their kept lattices (no projection): after new values (a
   * band from the worker pool written into the same array), a scale, domain or sd cut-off change.
   */
  repaint(): this {
    // Leaflet keeps its current tiles in `_tiles` (key → {el, coords, current}).
    const tiles = (this as unknown as { _tiles?: Record<string, TileRecord> })._tiles;
    if (!tiles) return this.redraw();
    for (const key of Object.keys(tiles)) {
      const el = tiles[key].el;
      if (el instanceof HTMLCanvasElement && this.lattices.has(el)) this.paint(el);
    }
    return this;
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

  /** Colour scale and, optionally, the values at its two ends. */
  setScale(scale: ScaleName, domain?: [number, number]): this {
    this.options.scale = scale;
    this.lut = buildLut(scale);
    if (domain) this.options.domain = domain;
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

// Leaflet's way of declaring option defaults: on the prototype, inheriting GridLayer's.
SurfaceLayer.prototype.options = L.Util.extend(Object.create(L.GridLayer.prototype.options), DEFAULTS);

/** Factory in Leaflet's style (`L.gridLayer(...)`). */
export function surfaceLayer(options?: SurfaceLayerOptions): SurfaceLayer {
  return new SurfaceLayer(options);
}
