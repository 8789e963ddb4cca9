/**
 * Guides for a plain planar map (local coordinates with no coordinate system, drawn with Leaflet's
 * L.CRS.Simple, where latitude holds y and longitude holds x): light grid lines at round
 * coordinates with their values along the top and right edges, and a scale bar in the data's units.
 * Written Leaflet's way: a layer and a control with options, no framework code; MapView adds them
 * only to planar maps. The pure parts live in ./planar-ticks.ts (tested in Node).
 */
import L from 'leaflet';
import { coordinateLabel, gridLines, scaleLength } from './planar-ticks.ts';

export interface PlanarGridOptions extends L.LayerOptions {
  /** About how many lines across the larger side of the view. */
  lines?: number;
  /** Line colour (light). */
  colour?: string;
  /** Label colour. */
  labelColour?: string;
}

/**
 * Light grid lines at round coordinates, under the map's panes (so markers and the surface lie on
 * top), and their values along the top (x) and right (y) edges above them.
 */
export class PlanarGrid extends L.Layer {
  declare options: PlanarGridOptions;
  private lineCanvas: HTMLCanvasElement | null = null;
  private labelCanvas: HTMLCanvasElement | null = null;
  private frame = 0;

  constructor(options: PlanarGridOptions = {}) {
    super(options);
    L.Util.setOptions(this, { lines: 8, colour: 'rgba(31, 43, 51, 0.13)', labelColour: '#3d4a52', ...options });
  }

  override onAdd(map: L.Map): this {
    const container = map.getContainer();
    const make = (z: string, cls: string) => {
      const c = L.DomUtil.create('canvas', cls, container) as HTMLCanvasElement;
      Object.assign(c.style, { position: 'absolute', left: '0', top: '0', pointerEvents: 'none', zIndex: z });
      return c;
    };
    // Lines below the map pane (z-index 400), labels above it but below the controls (800).
    this.lineCanvas = make('300', 'gapwise-planar-lines');
    this.labelCanvas = make('450', 'gapwise-planar-labels');
    this.lineCanvas.setAttribute('data-testid', 'planar-grid');
    map.on('move zoom resize viewreset', this.schedule, this);
    this.draw();
    return this;
  }

  override onRemove(map: L.Map): this {
    map.off('move zoom resize viewreset', this.schedule, this);
    cancelAnimationFrame(this.frame);
    this.lineCanvas?.remove();
    this.labelCanvas?.remove();
    this.lineCanvas = this.labelCanvas = null;
    return this;
  }

  private schedule(): void {
    cancelAnimationFrame(this.frame);
    this.frame = requestAnimationFrame(() => this.draw());
  }

  /** The x values and y values of the lines drawn last (for the tests' read-back). */
  shown: { x: number[]; y: number[] } = { x: [], y: [] };

  private draw(): void {
    const map = this._map;
    const lc = this.lineCanvas, tc = this.labelCanvas;
    if (!map || !lc || !tc) return;
    const size = map.getSize();
    const ratio = window.devicePixelRatio || 1;
    for (const c of [lc, tc]) {
      c.width = Math.round(size.x * ratio);
      c.height = Math.round(size.y * ratio);
      c.style.width = `${size.x}px`;
      c.style.height = `${size.y}px`;
    }
    const lines = lc.getContext('2d');
    const labels = tc.getContext('2d');
    if (!lines || !labels) return;
    lines.setTransform(ratio, 0, 0, ratio, 0, 0);
    labels.setTransform(ratio, 0, 0, ratio, 0, 0);
    const b = map.getBounds();
    const count = this.options.lines ?? 8;
    const across = Math.max(size.x, size.y);
    const gx = gridLines(b.getWest(), b.getEast(), Math.max(2, Math.round(count * size.x / across)));
    const gy = gridLines(b.getSouth(), b.getNorth(), Math.max(2, Math.round(count * size.y / across)));
    this.shown = { x: gx.values, y: gy.values };
    lines.strokeStyle = this.options.colour ?? 'rgba(31, 43, 51, 0.13)';
    lines.lineWidth = 1;
    lines.beginPath();
    const px = (x: number, y: number) => map.latLngToContainerPoint([y, x]);
    for (const x of gx.values) {
      const p = Math.round(px(x, 0).x) + 0.5;
      lines.moveTo(p, 0);
      lines.lineTo(p, size.y);
    }
    for (const y of gy.values) {
      const p = Math.round(px(0, y).y) + 0.5;
      lines.moveTo(0, p);
      lines.lineTo(size.x, p);
    }
    lines.stroke();
    labels.font = '10.5px system-ui, sans-serif';
    labels.lineJoin = 'round';
    labels.lineWidth = 3;
    labels.strokeStyle = 'rgba(251, 250, 247, 0.95)';
    labels.fillStyle = this.options.labelColour ?? '#3d4a52';
    const text = (s: string, x: number, y: number) => { labels.strokeText(s, x, y); labels.fillText(s, x, y); };
    labels.textBaseline = 'top';
    labels.textAlign = 'center';
    for (const x of gx.values) {
      const p = px(x, 0).x;
      // Clear of the zoom buttons (top left) and of the right edge's labels.
      if (p < 70 || p > size.x - 60) continue;
      text(coordinateLabel(x, gx.step), p, 4);
    }
    labels.textBaseline = 'middle';
    labels.textAlign = 'right';
    for (const y of gy.values) {
      const p = px(0, y).y;
      // Clear of the top edge's labels and of the scale bar and background button (bottom right).
      if (p < 24 || p > size.y - 80) continue;
      text(coordinateLabel(y, gy.step), size.x - 5, p);
    }
  }
}

export interface PlanarScaleOptions extends L.ControlOptions {
  /** Unit name after the length ("m", "coordinate units"). */
  unit?: string;
  /** Widest bar in pixels. */
  maxWidth?: number;
}

/** A scale bar for a planar map (L.CRS.Simple: one unit is 2^zoom pixels), in the data's units. */
export class PlanarScale extends L.Control {
  declare options: PlanarScaleOptions;
  private bar: HTMLElement | null = null;
  private unitLabel: HTMLElement | null = null;

  constructor(options: PlanarScaleOptions = {}) {
    super({ position: 'bottomright', ...options });
    L.Util.setOptions(this, { unit: 'coordinate units', maxWidth: 110, ...options });
  }

  override onAdd(map: L.Map): HTMLElement {
    const el = L.DomUtil.create('div', 'leaflet-control-scale gapwise-planar-scale');
    // The length inside the bar, the unit beside it ("coordinate units" is wider than a short bar).
    this.bar = L.DomUtil.create('div', 'leaflet-control-scale-line', el);
    this.bar.style.display = 'inline-block';
    this.bar.style.verticalAlign = 'bottom';
    el.appendChild(document.createTextNode(' '));
    this.unitLabel = L.DomUtil.create('span', 'gapwise-planar-scale-unit', el);
    Object.assign(this.unitLabel.style, { fontSize: '11px', background: 'rgba(255, 255, 255, 0.8)', padding: '0 3px', verticalAlign: 'bottom' });
    el.setAttribute('data-testid', 'planar-scale');
    map.on('zoom move resize', this.update, this);
    this.update();
    return el;
  }

  override onRemove(map: L.Map): void {
    map.off('zoom move resize', this.update, this);
  }

  /** A new unit name (e.g. once the user says the coordinates are metres). */
  setUnit(unit: string): this {
    this.options.unit = unit;
    this.update();
    return this;
  }

  private update(): void {
    const map = (this as unknown as { _map?: L.Map })._map;
    if (!map || !this.bar) return;
    const unitsPerPixel = 1 / map.options.crs!.scale(map.getZoom());
    const { length, pixels } = scaleLength(unitsPerPixel, this.options.maxWidth ?? 110);
    this.bar.style.width = `${Math.round(pixels)}px`;
    this.bar.textContent = length.toLocaleString('en-US', { maximumFractionDigits: 10 });
    if (this.unitLabel) this.unitLabel.textContent = this.options.unit ?? '';
    this.bar.setAttribute('data-length', String(length));
  }
}
