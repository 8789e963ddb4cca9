/**
 * SamplePointsLayer: many samples drawn as dots on one canvas, for data sets where a Leaflet marker
 * (an object, a path and event handlers) per sample would stall the page. The canvas covers the map
 * view; after every move or zoom the dots are placed again (each point's position at scale 1 is
 * projected once per point set, then scaled to the zoom) and drawn again, at most once per task;
 * positions are placed again only when the view changed, and each
 * dot is stamped from a pre-drawn sprite of its colour, a few tens of ms of stamping per task so that
 * 20,000 dots do not hold the page (the finished canvas is the same as drawn in one go). It hides
 * during zoom animations (Leaflet's 'leaflet-zoom-hide'). A click picks the nearest dot within a few pixels (one pass over the
 * projected positions, kept from the last drawing). Colours come per sample from the caller; the
 * selected sample is drawn larger with a dark ring. Written Leaflet's way (extends L.Layer); the
 * Svelte map component creates it and calls its setters.
 */
import L from 'leaflet';

export interface SamplePointsOptions extends L.LayerOptions {
  /** Dot radius, px. */
  radius?: number;
  /** Largest distance from a click to a dot that picks it, px. */
  pickRadius?: number;
}

/** Time spent stamping dots in one task before the rest waits for the next one, ms. */
const DRAW_BUDGET_MS = 25;

export class SamplePointsLayer extends L.Layer {
  declare options: SamplePointsOptions;
  private canvas: HTMLCanvasElement | null = null;
  private lat: ArrayLike<number> = [];
  private lon: ArrayLike<number> = [];
  private colours: string[] = [];
  private selected: number | null = null;
  /** Container-pixel positions from the last drawing (NaN off the canvas). */
  private px = new Float32Array(0);
  private py = new Float32Array(0);
  private pick: ((index: number) => void) | null = null;

  constructor(options: SamplePointsOptions = {}) {
    super(options);
    L.Util.setOptions(this, { radius: 3, pickRadius: 6, ...options });
  }

  /** The samples' positions (degrees) and one fill colour per sample. */
  setPoints(lat: ArrayLike<number>, lon: ArrayLike<number>, colours: string[]): this {
    this.lat = lat;
    this.lon = lon;
    this.unitFor = null;
    this.projectedFor = '';
    this.colours = colours;
    this.scheduleDraw();
    return this;
  }

  setColours(colours: string[]): this {
    this.colours = colours;
    this.scheduleDraw();
    return this;
  }

  setSelected(index: number | null): this {
    this.selected = index;
    this.scheduleDraw();
    return this;
  }

  private frame: ReturnType<typeof setTimeout> | null = null;
  /** Bumped by each drawing: the remaining slices of an earlier one stop. */
  private drawing = 0;

  /**
   * Draws once in a coming task, however many changes and map events come before it. A timer, not an
   * animation frame: work in a frame callback shares its task with the page's own painting of the
   * canvas, which made one long task of the two.
   */
  scheduleDraw(): void {
    if (this.frame !== null) return;
    this.frame = setTimeout(() => {
      this.frame = null;
      this.draw();
    }, 0);
  }

  /** Called with the index of a clicked sample. */
  onPick(f: (index: number) => void): this {
    this.pick = f;
    return this;
  }

  /** Number of samples drawn. */
  get count(): number {
    return this.lat.length;
  }

  override onAdd(map: L.Map): this {
    const c = L.DomUtil.create('canvas', 'gapwise-sample-points leaflet-zoom-hide') as HTMLCanvasElement;
    c.style.pointerEvents = 'none';
    map.getPane('overlayPane')!.appendChild(c);
    this.canvas = c;
    map.on('moveend zoomend resize viewreset', this.scheduleDraw, this);
    map.on('click', this.onClick, this);
    this.scheduleDraw();
    return this;
  }

  override onRemove(map: L.Map): this {
    map.off('moveend zoomend resize viewreset', this.scheduleDraw, this);
    map.off('click', this.onClick, this);
    if (this.frame !== null) clearTimeout(this.frame);
    this.frame = null;
    this.drawing++;
    this.canvas?.remove();
    this.canvas = null;
    return this;
  }

  private onClick(e: L.LeafletMouseEvent): void {
    if (!this.pick) return;
    const r = this.options.pickRadius ?? 6;
    let best = -1;
    let bestD = r * r;
    for (let i = 0; i < this.px.length; i++) {
      const dx = this.px[i] - e.containerPoint.x;
      const dy = this.py[i] - e.containerPoint.y;
      const d = dx * dx + dy * dy;
      if (d <= bestD) {
        bestD = d;
        best = i;
      }
    }
    if (best >= 0) this.pick(best);
  }

  /** The view the positions were projected for (container size, pixel origin, zoom), and the point count. */
  private projectedFor = '';

  /**
   * Each point's map position at scale 1 (the CRS's pixel position at zoom 0 over its scale there: a
   * projection then a linear transformation), kept for the map's CRS it was computed with: at zoom z a point's pixel is these times crs.scale(z), so a new
   * view costs a multiply and a round per point instead of a projection (latLngToContainerPoint).
   */
  private ux = new Float64Array(0);
  private uy = new Float64Array(0);
  private unitFor: L.CRS | null = null;

  private unitPositions(crs: L.CRS): void {
    if (this.unitFor === crs && this.ux.length === this.lat.length) return;
    const n = this.lat.length;
    this.ux = new Float64Array(n);
    this.uy = new Float64Array(n);
    const s0 = crs.scale(0);
    for (let i = 0; i < n; i++) {
      const p = crs.latLngToPoint(L.latLng(this.lat[i], this.lon[i]), 0);
      this.ux[i] = p.x / s0;
      this.uy[i] = p.y / s0;
    }
    this.unitFor = crs;
  }

  /**
   * Container-pixel positions of every dot (as latLngToContainerPoint gives them: the projected pixel
   * rounded, less the pixel origin, plus the map pane's offset), recomputed only when the view or the
   * points change.
   */
  private project(map: L.Map, size: L.Point, radius: number): void {
    const n = this.lat.length;
    const origin = map.getPixelOrigin();
    const pane = map.containerPointToLayerPoint([0, 0]);
    const zoom = map.getZoom();
    const key = `${size.x}x${size.y}|${zoom}|${origin.x},${origin.y}|${pane.x},${pane.y}|${n}`;
    if (key === this.projectedFor && this.px.length === n) return;
    this.projectedFor = key;
    if (this.px.length !== n) {
      this.px = new Float32Array(n);
      this.py = new Float32Array(n);
    }
    const crs = map.options.crs ?? L.CRS.EPSG3857;
    this.unitPositions(crs);
    const scale = crs.scale(zoom);
    const dx = origin.x + pane.x;
    const dy = origin.y + pane.y;
    for (let i = 0; i < n; i++) {
      const x = Math.round(this.ux[i] * scale) - dx;
      const y = Math.round(this.uy[i] * scale) - dy;
      const inside = x >= -radius && y >= -radius && x <= size.x + radius && y <= size.y + radius;
      this.px[i] = inside ? x : NaN;
      this.py[i] = inside ? y : NaN;
    }
  }

  /** One pre-drawn dot per colour (device pixels), stamped with drawImage: far cheaper than an arc each. */
  private sprites = new Map<string, HTMLCanvasElement>();

  private sprite(colour: string, radius: number, ratio: number): HTMLCanvasElement {
    const key = `${colour}|${radius}|${ratio}`;
    let c = this.sprites.get(key);
    if (c) return c;
    const side = Math.ceil((2 * radius + 2) * ratio);
    c = document.createElement('canvas');
    c.width = side;
    c.height = side;
    const ctx = c.getContext('2d')!;
    ctx.scale(ratio, ratio);
    ctx.beginPath();
    ctx.arc(radius + 1, radius + 1, radius, 0, 2 * Math.PI);
    ctx.fillStyle = colour;
    ctx.fill();
    ctx.lineWidth = 0.6;
    ctx.strokeStyle = '#1f2b33';
    ctx.stroke();
    this.sprites.set(key, c);
    return c;
  }

  /** Draws every dot (and the selected one last, larger); projects again only after the view changed. */
  draw(): void {
    const map = this._map as L.Map | undefined;
    const c = this.canvas;
    if (!map || !c) return;
    const size = map.getSize();
    const ratio = window.devicePixelRatio || 1;
    const w = Math.round(size.x * ratio);
    const h = Math.round(size.y * ratio);
    if (c.width !== w || c.height !== h) {
      c.width = w;
      c.height = h;
      c.style.width = `${size.x}px`;
      c.style.height = `${size.y}px`;
    }
    L.DomUtil.setPosition(c, map.containerPointToLayerPoint([0, 0]));
    const ctx = c.getContext('2d');
    if (!ctx) return;
    const radius = this.options.radius ?? 3;
    const crs = map.options.crs ?? L.CRS.EPSG3857;
    if (this.unitFor !== crs || this.ux.length !== this.lat.length) {
      // New points: their positions at scale 1 in this task, the drawing in the next.
      this.unitPositions(crs);
      this.scheduleDraw();
      return;
    }
    this.project(map, size, radius);
    ctx.setTransform(1, 0, 0, 1, 0, 0);
    ctx.clearRect(0, 0, w, h);
    const n = this.lat.length;
    const offset = (radius + 1) * ratio;
    const sprites = new Map<string, HTMLCanvasElement>();
    const generation = ++this.drawing;
    let i = 0;
    // Dots in order, DRAW_BUDGET_MS of stamping per task: the finished canvas is the same as in one go.
    const slice = (): void => {
      if (generation !== this.drawing || this.canvas !== c) return;
      const until = performance.now() + DRAW_BUDGET_MS;
      for (; i < n; i++) {
        if ((i & 255) === 0 && i > 0 && performance.now() > until) {
          setTimeout(slice, 0);
          return;
        }
        const x = this.px[i];
        if (!Number.isFinite(x)) continue;
        const colour = this.colours[i] ?? '#fbfaf7';
        let img = sprites.get(colour);
        if (!img) {
          img = this.sprite(colour, radius, ratio);
          sprites.set(colour, img);
        }
        ctx.drawImage(img, Math.round(x * ratio - offset), Math.round(this.py[i] * ratio - offset));
      }
      const s = this.selected;
      if (s !== null && s >= 0 && s < n && Number.isFinite(this.px[s])) {
        ctx.setTransform(ratio, 0, 0, ratio, 0, 0);
        ctx.beginPath();
        ctx.arc(this.px[s], this.py[s], 8, 0, 2 * Math.PI);
        ctx.fillStyle = this.colours[s] ?? '#fbfaf7';
        ctx.fill();
        ctx.lineWidth = 3;
        ctx.strokeStyle = '#000000';
        ctx.stroke();
      }
    };
    slice();
  }
}
