/**
 * Numbered map markers for suggested sample sites: a Leaflet layer group of div icons, each a round
 * badge with its rank. The badge is built element by element and its number set with textContent
 * (never innerHTML), so nothing from a file can become markup. Styles are inline, so the markers look
 * the same wherever the layer is added.
 */
import L from 'leaflet';

/** One site to mark (WGS 84). */
export interface MarkerSite {
  rank: number;
  lat: number;
  lon: number;
  /** Tooltip text (plain text). */
  title?: string;
}

export interface MarkerOptions {
  /** Badge fill (default a deep teal) and text colour. */
  fill?: string;
  ink?: string;
  /** Badge diameter in pixels (default 24). */
  size?: number;
  /** Called with the rank when a marker is clicked. */
  onselect?: (rank: number) => void;
}

/** The badge element of one site: a div whose only content is the rank as text. */
export function markerBadge(rank: number, options: MarkerOptions = {}): HTMLElement {
  const size = options.size ?? 24;
  const el = document.createElement('div');
  el.textContent = String(rank);
  el.setAttribute('aria-hidden', 'true');
  const s = el.style;
  s.width = `${size}px`;
  s.height = `${size}px`;
  s.lineHeight = `${size - 4}px`;
  s.borderRadius = '50%';
  s.border = '2px solid #ffffff';
  s.background = options.fill ?? '#0f5e63';
  s.color = options.ink ?? '#ffffff';
  s.fontWeight = '700';
  s.fontSize = `${Math.round(size * 0.5)}px`;
  s.textAlign = 'center';
  s.boxShadow = '0 1px 3px rgba(0, 0, 0, 0.45)';
  s.boxSizing = 'border-box';
  s.fontVariantNumeric = 'tabular-nums';
  return el;
}

/**
 * A layer group with one numbered marker per site (highest rank drawn on top), keyboard-focusable,
 * with the title as tooltip and alt text.
 */
export function suggestionMarkers(sites: readonly MarkerSite[], options: MarkerOptions = {}): L.LayerGroup {
  const size = options.size ?? 24;
  const group = L.layerGroup();
  for (const site of sites) {
    if (!Number.isFinite(site.lat) || !Number.isFinite(site.lon)) continue;
    const icon = L.divIcon({
      html: markerBadge(site.rank, options),
      className: 'gapwise-next-site',
      iconSize: [size, size],
      iconAnchor: [size / 2, size / 2],
    });
    const label = site.title ?? `Suggested site ${site.rank}`;
    const marker = L.marker([site.lat, site.lon], {
      icon, title: label, alt: label, keyboard: true, zIndexOffset: 1000 - site.rank,
    });
    if (options.onselect) marker.on('click', () => options.onselect?.(site.rank));
    group.addLayer(marker);
  }
  return group;
}
