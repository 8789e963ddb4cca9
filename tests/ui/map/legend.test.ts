import { describe, expect, it } from 'vitest';
import { formatAtStep, legendData, legendSvg } from '../../../src/ui/map/legend.ts';
import { logTicks } from '../../../src/io/report-svg.ts';
import { escapeText } from '../../../src/io/markup.ts';
import { colourAt, hex } from '../../../src/ui/map/colour-scales.ts';

describe('formatAtStep', () => {
  it('formatAtStep uses the decimals the spacing needs and a true minus sign', () => {
    expect(formatAtStep(40, 20)).toBe('40');
    expect(formatAtStep(0.05, 0.01)).toBe('0.05');
    expect(formatAtStep(-2, 1)).toBe('−2');
    expect(formatAtStep(-0.0001, 1)).toBe('0');
    expect(formatAtStep(NaN, 1)).toBe('–');
  });
});

describe('legendData', () => {
  it('legendData for the mean labels ticks in data units at their positions on the bar', () => {
    const d = legendData({ kind: 'mean', domain: [12.3, 487.9], unit: 'mg/kg' });
    expect(d.title).toBe('Estimated value (mg/kg)');
    expect(d.scale).toBe('loam');
    expect(d.ticks.map((t) => t.label)).toEqual(['100', '200', '300', '400']);
    expect(d.ticks[0].t).toBeCloseTo((100 - 12.3) / (487.9 - 12.3), 12);
    expect(d.gradient).toHaveLength(11);
    expect(d.gradient[0].colour).toBe(hex(colourAt('loam', 0)));
    expect(d.gradient[10].colour).toBe(hex(colourAt('loam', 1)));
  });

  it('legendData for P(exceed) shows percentages, the threshold in the title and the diverging scale', () => {
    const d = legendData({ kind: 'pExceed', unit: 'mg/kg', threshold: 200 });
    expect(d.title).toBe('Chance of exceeding 200 mg/kg');
    expect(d.scale).toBe('tide');
    expect(d.ticks.map((t) => t.label)).toEqual(['0 %', '25 %', '50 %', '75 %', '100 %']);
    expect(d.ticks.map((t) => t.t)).toEqual([0, 0.25, 0.5, 0.75, 1]);
  });

  it('legendData for sd uses haze; classes carry limits, labels and class-middle colours', () => {
    const d = legendData({ kind: 'sd', domain: [0, 30], unit: 'mg/kg', classes: 3 });
    expect(d.title).toBe('Uncertainty, standard deviation (mg/kg)');
    expect(d.classes).toEqual([
      { from: 0, to: 10, label: '0 – 10', colour: hex(colourAt('haze', 1 / 6)) },
      { from: 10, to: 20, label: '10 – 20', colour: hex(colourAt('haze', 0.5)) },
      { from: 20, to: 30, label: '20 – 30', colour: hex(colourAt('haze', 5 / 6)) },
    ]);
  });

  it('legendData rejects a missing or reversed domain', () => {
    expect(() => legendData({ kind: 'mean' })).toThrow(/finite numbers with min ≤ max, got \[NaN, NaN\]/);
    expect(() => legendData({ kind: 'mean', domain: [3, 1] })).toThrow(RangeError);
    expect(() => legendData({ kind: 'mean', domain: [0, 1], classes: 0 })).toThrow(/at least 1 legend class/);
  });
});

describe('legendSvg', () => {
  it('legendSvg escapes user text (unit, title) and parses as one svg element with the gradient and labels', () => {
    const d = legendData({ kind: 'mean', domain: [0, 100], unit: '<b>mg/kg</b> & "ppm"' });
    const svg = legendSvg(d, { footnote: 'Screening only: results need a licensed professional.' });
    expect(svg.startsWith('<svg xmlns="http://www.w3.org/2000/svg"')).toBe(true);
    expect(svg.endsWith('</svg>')).toBe(true);
    expect(svg).not.toContain('<b>');
    expect(svg).toContain('Estimated value (&lt;b&gt;mg/kg&lt;/b&gt; &amp; &quot;ppm&quot;)');
    expect(svg).toContain(`stop-color="${hex(colourAt('loam', 0))}"`);
    for (const label of ['>0<', '>20<', '>100<']) expect(svg).toContain(label);
    expect(svg).toContain('Screening only');
    // Balanced tags: every opening tag of these kinds is closed or self-closed.
    for (const tag of ['text', 'linearGradient', 'defs', 'title']) {
      expect((svg.match(new RegExp(`<${tag}[ >]`, 'g')) ?? []).length, tag).toBe((svg.match(new RegExp(`</${tag}>`, 'g')) ?? []).length);
    }
  });

  it('legendSvg draws one swatch per class', () => {
    const svg = legendSvg(legendData({ kind: 'pExceed', classes: 4, threshold: 5 }));
    expect((svg.match(/<rect /g) ?? []).length).toBe(4);
    expect(svg).toContain('0 % – 25 %');
    expect(svg).not.toContain('linearGradient');
  });

  it('escapeText replaces the five XML specials', () => {
    expect(escapeText(`<a href="x">'&'</a>`)).toBe('&lt;a href=&quot;x&quot;&gt;&#39;&amp;&#39;&lt;/a&gt;');
  });
});

describe('legendData with log colours and the action level', () => {
  it('legendData log: ticks 1, 2, 5 × 10^k placed by ln(value); the action level marked on the mean bar', () => {
    const d = legendData({ kind: 'mean', domain: [10, 1000], unit: 'mg/kg', log: true, threshold: 200, markThreshold: true });
    expect(d.log).toBe(true);
    expect(d.ticks.map((t) => t.value)).toEqual([10, 20, 50, 100, 200, 500, 1000]);
    expect(d.ticks.find((t) => t.value === 100)!.t).toBeCloseTo(0.5, 12); // ln-midpoint of 10 and 1000
    expect(d.mark!.t).toBeCloseTo(Math.log(20) / Math.log(100), 12);
    expect(d.mark!.label).toBe('action level 200 mg/kg');
    expect(logTicks(0.5, 3)).toEqual([0.5, 1, 2]);
  });

  it('legendData names the action level in a line for exceedance, and when it lies outside the mean domain', () => {
    expect(legendData({ kind: 'pExceed', unit: 'mg/kg', threshold: 200, markThreshold: true, classes: 5 }).note).toMatch(/^Action level 200 mg\/kg/);
    const d = legendData({ kind: 'mean', domain: [10, 100], threshold: 200, markThreshold: true });
    expect(d.mark).toBeUndefined();
    expect(d.note).toMatch(/above every value shown/);
    // Linear by default: 55 sits halfway.
    expect(legendData({ kind: 'mean', domain: [10, 100], threshold: 55, markThreshold: true }).mark!.t).toBeCloseTo(0.5, 12);
  });
});
