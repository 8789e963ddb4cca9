/**
 * Contour lines of the mean surface over the map, written Leaflet's way: a feature group of
 * polylines drawn by its own SVG renderer in a pane above the surface, options with defaults, no
 * framework code. The action level's line is drawn wider and darker than the round levels; every
 * line names its level in a tooltip. MapView creates it and hands it each finished surface
 * (setContours); the lines themselves come from ./contour-lines.ts.
 */
import L from 'leaflet';
import type { MapContour } from './contour-lines.ts';
import { formatValue } from '../../io/format.ts';

export interface ContourLayerOptions extends L.LayerOptions {
  /** Pane of the lines (created on the map if missing, above the surface pane). */
  pane?: string;
  /** Colour and width of the round levels' lines. */
  colour?: string;
  weight?: number;
  /** Colour and width of the action level's line. */
  actionColour?: string;
  actionWeight?: number;
  /** Data unit, shown in the tooltips. */
  unit?: string;
}

export class ContourLayer extends L.FeatureGroup {
  declare options: ContourLayerOptions;
  private renderer: L.Renderer;
  private contours: MapContour[] = [];

  constructor(options: ContourLayerOptions = {}) {
    super([], options);
    L.Util.setOptions(this, {
      pane: 'contours', colour: '#1f2b33', weight: 1, actionColour: '#7a1d0c', actionWeight: 3, unit: '', ...options,
    });
    this.renderer = L.svg({ pane: this.options.pane });
  }

  override onAdd(map: L.Map): this {
    const pane = this.options.pane ?? 'contours';
    if (!map.getPane(pane)) map.createPane(pane).style.zIndex = '380';
    super.onAdd(map);
    this.draw();
    return this;
  }

  /** Replaces the lines (an empty list clears them). */
  setContours(contours: MapContour[], unit?: string): this {
    this.contours = contours;
    if (unit !== undefined) this.options.unit = unit;
    if (this._map) this.draw();
    return this;
  }

  /** Levels drawn, with their line counts and which is the action level (for the tests' read-back). */
  shown(): Array<{ level: number; action: boolean; lines: number }> {
    return this.contours.map((c) => ({ level: c.level, action: c.action, lines: c.lines.length }));
  }

  private draw(): void {
    this.clearLayers();
    const o = this.options;
    const unit = o.unit ? ` ${o.unit}` : '';
    // Round levels first, so the action level's line lies on top where lines meet.
    const ordered = [...this.contours].sort((a, b) => Number(a.action) - Number(b.action));
    for (const c of ordered) {
      if (c.lines.length === 0) continue;
      const line = L.polyline(c.lines, {
        renderer: this.renderer, pane: o.pane, interactive: true, bubblingMouseEvents: true,
        color: c.action ? o.actionColour : o.colour, weight: c.action ? o.actionWeight : o.weight,
        opacity: c.action ? 0.95 : 0.7, lineJoin: 'round', lineCap: 'round',
        className: c.action ? 'gapwise-contour gapwise-contour-action' : 'gapwise-contour',
      });
      line.bindTooltip(`${formatValue(c.level)}${unit}${c.action ? ' (action level)' : ''}`, { sticky: true, direction: 'top' });
      line.addTo(this);
      line.getElement()?.setAttribute('data-level', String(c.level));
    }
  }
}
