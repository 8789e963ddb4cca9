/**
 * SampleMarkers: one Leaflet circle marker per sample (for data sets small enough that a marker each
 * is affordable; larger ones use SamplePointsLayer), placed in slices of at most MARKER_SLICE_MS so
 * that a few hundred samples do not hold the page in one long task. The first slice is placed in the
 * task after `build` (which runs inside whatever task changed the samples, often a long one already);
 * the rest follow, one slice per task. Each marker is created in its final
 * colour, and a colour change rewrites only the fill of the markers whose colour changed (a full
 * restyle sets about ten attributes per path). The selected sample is drawn larger with a dark ring,
 * also when its marker arrives in a later slice. Each path carries data-sample-index and data-sample-id.
 */
import L from 'leaflet';

/** Time spent placing markers in one task before the rest waits for the next one, ms. */
const MARKER_SLICE_MS = 20;

const BASE_STYLE = { radius: 5, weight: 1.2, color: '#1f2b33' };
const SELECTED_STYLE = { radius: 8, weight: 3, color: '#000000' };

export class SampleMarkers {
  private markers: L.CircleMarker[] = [];
  private lat: ArrayLike<number> = [];
  private lon: ArrayLike<number> = [];
  private ids: string[] = [];
  private colours: string[] = [];
  private selected: number | null = null;
  private selectedMarker: L.CircleMarker | null = null;
  /** Bumped by build() and clear(): a pending slice of an earlier build stops. */
  private generation = 0;

  constructor(private readonly group: L.LayerGroup, private readonly pick: (index: number) => void) {}

  /** Removes every marker and stops placing the rest of an earlier build. */
  clear(): void {
    this.generation++;
    this.group.clearLayers();
    this.markers = [];
    this.selectedMarker = null;
  }

  /** Places one marker per sample, one slice per task from the next task on. */
  build(lat: ArrayLike<number>, lon: ArrayLike<number>, ids: string[], colours: string[], selected: number | null): void {
    this.clear();
    this.lat = lat;
    this.lon = lon;
    this.ids = ids;
    this.colours = colours;
    this.selected = selected;
    const generation = this.generation;
    const n = ids.length;
    const slice = (): void => {
      if (generation !== this.generation) return;
      const from = this.markers.length;
      const until = performance.now() + MARKER_SLICE_MS;
      let to = from;
      while (to < n) {
        this.place(to++);
        if ((to - from) % 16 === 0 && performance.now() >= until) break;
      }
      if (this.selected !== null && this.selected >= from && this.selected < to) this.highlight(this.selected);
      else this.selectedMarker?.bringToFront();
      if (to < n) setTimeout(slice, 0);
    };
    setTimeout(slice, 0);
  }

  private place(i: number): void {
    const marker = L.circleMarker([this.lat[i], this.lon[i]], {
      ...BASE_STYLE, fillColor: this.colours[i] ?? '#fbfaf7', fillOpacity: 1, bubblingMouseEvents: false,
    });
    marker.on('click', () => this.pick(i));
    marker.addTo(this.group);
    const path = marker.getElement();
    if (path) {
      path.setAttribute('data-sample-index', String(i));
      path.setAttribute('data-sample-id', this.ids[i]);
    }
    this.markers.push(marker);
  }

  /** One fill colour per sample; only markers whose colour changed are restyled. */
  setColours(colours: string[]): void {
    this.colours = colours;
    for (let i = 0; i < this.markers.length; i++) {
      const c = colours[i] ?? '#fbfaf7';
      const marker = this.markers[i];
      if (marker.options.fillColor === c) continue;
      const path = marker.getElement();
      if (path instanceof SVGElement && marker.options.fill !== false) {
        // What setStyle does for a fill colour on an SVG path, without rewriting the other attributes.
        marker.options.fillColor = c;
        path.setAttribute('fill', c);
      } else {
        marker.setStyle({ fillColor: c });
      }
    }
  }

  /** Draws the sample `sel` larger with a dark ring (null: none). */
  highlight(sel: number | null): void {
    this.selected = sel;
    if (this.selectedMarker) this.selectedMarker.setStyle(BASE_STYLE).setRadius(BASE_STYLE.radius);
    this.selectedMarker = sel !== null ? this.markers[sel] ?? null : null;
    if (this.selectedMarker) this.selectedMarker.setStyle(SELECTED_STYLE).setRadius(SELECTED_STYLE.radius).bringToFront();
  }
}
