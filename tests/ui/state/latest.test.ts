import { describe, expect, it } from 'vitest';
import { LatestRun } from '../../../src/ui/state/latest.ts';

describe('LatestRun', () => {
  it('LatestRun.begin aborts the previous run, which is then no longer current', () => {
    const runs = new LatestRun();
    const first = runs.begin();
    expect(first.current()).toBe(true);
    const second = runs.begin();
    expect(first.signal.aborted).toBe(true);
    expect(first.current()).toBe(false);
    expect(second.current()).toBe(true);
    expect(second.signal.aborted).toBe(false);
  });

  it('LatestRun.cancel aborts the run and leaves none current', () => {
    const runs = new LatestRun();
    const r = runs.begin();
    runs.cancel();
    expect(r.signal.aborted).toBe(true);
    expect(r.current()).toBe(false);
    expect(runs.active).toBe(false);
  });
});
