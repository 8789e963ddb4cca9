import { describe, expect, it } from 'vitest';
import { autoCellSize, extentOf, measuredRate, measureSurfaceSpeed, planGrid, roundCell } from '../../../src/ui/state/grid-plan.ts';

describe('roundCell', () => {
  it('roundCell rounds to 1, 2, 2.5 or 5 times a power of ten', () => {
    expect(roundCell(1.2)).toBe(1);
    expect(roundCell(2.1)).toBe(2);
    expect(roundCell(2.9)).toBe(2.5);
    expect(roundCell(4)).toBe(5);
    expect(roundCell(8)).toBe(10);
    expect(roundCell(0.031)).toBeCloseTo(0.025, 12);
  });
});

describe('autoCellSize', () => {
  it('autoCellSize gives about 40,000 cells: 400 m × 300 m → 2 m cells (30,000 cells)', () => {
    // sqrt(120000 / 40000) = 1.73 m, rounded to 2 m.
    expect(autoCellSize(400, 300)).toBe(2);
  });
});

describe('extentOf', () => {
  it('extentOf returns the bounding box', () => {
    expect(extentOf([3, 1, 2], [5, 9, 7])).toEqual({ xmin: 1, ymin: 5, xmax: 3, ymax: 9 });
  });
});

describe('planGrid', () => {
  const x = [1000, 1400, 1200];
  const y = [5000, 5300, 5100];
  it('planGrid pads the extent by a fraction of its larger side and snaps to the cell', () => {
    const p = planGrid({ x, y, padding: 0.05, cellSize: 10, workers: 2 });
    // pad = 0.05 · 400 = 20 m: x 980 … 1420, y 4980 … 5320 → 44 × 34 cells of 10 m.
    expect(p.grid).toEqual({ x0: 980, y0: 5320, cell: 10, nx: 44, ny: 34 });
    expect(p.cells).toBe(44 * 34);
    expect(p.auto).toBe(false);
    expect(p.seconds).toBeGreaterThan(0);
  });
  it('planGrid picks an automatic cell when none is given', () => {
    const p = planGrid({ x, y, padding: 0, cellSize: 0, workers: 1 });
    expect(p.auto).toBe(true);
    expect(p.cell).toBe(2); // sqrt(400·300/40000) = 1.73 → 2 m
  });
  it('planGrid with a boundary counts only the cells inside it', () => {
    const square = [[[0, 0], [100, 0], [100, 100], [0, 100], [0, 0]]];
    const triangle = [[[0, 0], [105, 0], [0, 105], [0, 0]]];
    const p1 = planGrid({ x, y, padding: 0.05, cellSize: 10, polygons: [square], workers: 1 });
    expect(p1.cells).toBe(100);
    const p2 = planGrid({ x, y, padding: 0.05, cellSize: 10, polygons: [triangle], workers: 1 });
    // Cell centres ((i + ½)·10, (j + ½)·10) inside x + y < 105 (none on the edge): i + j ≤ 9, 55 cells.
    expect(p2.cells).toBe(55);
  });
});

describe('measuredRate', () => {
  it('measuredRate turns a measured time into the rate that makes planGrid predict that time again', () => {
    const x = [0, 100, 50], y = [0, 80, 40];
    const plan = planGrid({ x, y, padding: 0, cellSize: 1, workers: 2 });
    const rate = measuredRate(3, plan.cells, 2, 4.2)!;
    const again = planGrid({ x, y, padding: 0, cellSize: 1, workers: 2, flopsPerSecond: rate });
    expect(again.seconds).toBeCloseTo(4.2, 9);
    expect(measuredRate(3, plan.cells, 2, 0)).toBeUndefined();
  });
});

describe('measureSurfaceSpeed', () => {
  it('measureSurfaceSpeed separates a fixed overhead from the per-cell work, so a grid 4 times larger is predicted', () => {
    // A made-up run: 1.5 s of start-up, then 1e-4 s per cell (per the whole pool).
    const x = [0, 100, 50], y = [0, 80, 40];
    const small = planGrid({ x, y, padding: 0, cellSize: 0.6, workers: 2 });
    const large = planGrid({ x, y, padding: 0, cellSize: 0.3, workers: 2 });
    const time = (done: number) => 1.5 + 1e-4 * done;
    const progress = [0.1, 0.3, 0.6, 0.9, 1].map((f) => ({ done: Math.round(f * small.cells), seconds: time(Math.round(f * small.cells)) }));
    const speed = measureSurfaceSpeed({ n: 3, cells: small.cells, workers: 2, seconds: time(small.cells), progress })!;
    // The factorisation (n³/3 flops) is counted as arithmetic, so the overhead is 1.5 s less that sliver.
    expect(speed.overheadSeconds).toBeCloseTo(1.5, 3);
    const again = planGrid({ x, y, padding: 0, cellSize: 0.3, workers: 2, flopsPerSecond: speed.flopsPerSecond, overheadSeconds: speed.overheadSeconds });
    // The larger grid's time by the same made-up rule, to 1 % (the factorisation term is tiny at n = 3).
    expectRelative(again.seconds, time(large.cells), 0.01);
  });
  it('measureSurfaceSpeed without progress points puts the whole time down to arithmetic', () => {
    const s = measureSurfaceSpeed({ n: 3, cells: 1000, workers: 2, seconds: 2, progress: [] })!;
    expect(s.overheadSeconds).toBe(0);
    expect(s.flopsPerSecond).toBeCloseTo(measuredRate(3, 1000, 2, 2)!, 9);
    expect(measureSurfaceSpeed({ n: 3, cells: 1000, workers: 2, seconds: 0, progress: [] })).toBeUndefined();
  });
});

function expectRelative(actual: number, expected: number, rel: number): void {
  expect(Math.abs(actual - expected) / Math.abs(expected)).toBeLessThan(rel);
}
