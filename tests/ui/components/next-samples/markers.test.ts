import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';

// Leaflet needs a browser to load; a recording stand-in takes its place here.
const calls: { divIcon: unknown[]; marker: Array<{ latlng: unknown; options: Record<string, unknown>; handlers: Record<string, () => void> }> } = { divIcon: [], marker: [] };
vi.mock('leaflet', () => {
  const api = {
    layerGroup: () => {
      const layers: unknown[] = [];
      return { layers, addLayer(l: unknown) { layers.push(l); return this; } };
    },
    divIcon: (o: unknown) => { calls.divIcon.push(o); return o; },
    marker: (latlng: unknown, options: Record<string, unknown>) => {
      const m = { latlng, options, handlers: {} as Record<string, () => void>, on(ev: string, f: () => void) { m.handlers[ev] = f; return m; } };
      calls.marker.push(m);
      return m;
    },
  };
  return { default: api, ...api };
});

/** A minimal element: records textContent and attributes, and refuses innerHTML. */
class FakeElement {
  textContent = '';
  style: Record<string, string> = {};
  attributes: Record<string, string> = {};
  setAttribute(k: string, v: string) { this.attributes[k] = v; }
  set innerHTML(_v: string) { throw new Error('innerHTML must not be used'); }
}

beforeAll(() => {
  (globalThis as { document?: unknown }).document = { createElement: () => new FakeElement() };
});
afterAll(() => {
  delete (globalThis as { document?: unknown }).document;
});

describe('suggestionMarkers', () => {
  it('suggestionMarkers makes one numbered div-icon marker per site, text set as textContent', async () => {
    const { suggestionMarkers } = await import('../../../../src/ui/components/next-samples/markers.ts');
    const picked: number[] = [];
    const group = suggestionMarkers([
      { rank: 1, lat: 48.5, lon: 11.25, title: '<b>S01</b>' },
      { rank: 2, lat: 48.6, lon: 11.3 },
      { rank: 3, lat: NaN, lon: 11.3 },
    ], { onselect: (r) => picked.push(r), size: 20 }) as unknown as { layers: unknown[] };
    expect(group.layers).toHaveLength(2);
    const icons = calls.divIcon as Array<{ html: FakeElement; iconSize: number[]; iconAnchor: number[]; className: string }>;
    expect(icons.map((i) => i.html.textContent)).toEqual(['1', '2']);
    expect(icons[0].html).toBeInstanceOf(FakeElement);
    expect(icons[0].iconSize).toEqual([20, 20]);
    expect(icons[0].iconAnchor).toEqual([10, 10]);
    expect(icons[0].className).toBe('gapwise-next-site');
    expect(calls.marker[0].latlng).toEqual([48.5, 11.25]);
    // The title is passed as plain text for Leaflet's title/alt attributes.
    expect(calls.marker[0].options.title).toBe('<b>S01</b>');
    expect(calls.marker[1].options.title).toBe('Suggested site 2');
    expect((calls.marker[0].options.zIndexOffset as number) > (calls.marker[1].options.zIndexOffset as number)).toBe(true);
    calls.marker[1].handlers.click();
    expect(picked).toEqual([2]);
  });

  it('markerBadge sets only the rank as text and sizes the badge', async () => {
    const { markerBadge } = await import('../../../../src/ui/components/next-samples/markers.ts');
    const el = markerBadge(12, { size: 30, fill: '#123456' }) as unknown as FakeElement;
    expect(el.textContent).toBe('12');
    expect(el.style.width).toBe('30px');
    expect(el.style.background).toBe('#123456');
    expect(el.attributes['aria-hidden']).toBe('true');
  });
});
