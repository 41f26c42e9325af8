import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { HoltWinters } from './holt-winters.js';

describe('HoltWinters (additive; Brutlag, LISA 2000, METHODS.md 7.4)', () => {
  // Additive Holt-Winters reproduces a series that is exactly level + trend * t + season(t mod m), for
  // any smoothing weights (algebra of the standard form, METHODS.md 7.4 [M], checked here [C]).
  it('forecasts an exact trend + season series without error', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 2, max: 24 }),
        fc.double({ min: -5, max: 5, noNaN: true }),
        fc.double({ min: 0.01, max: 0.9, noNaN: true }),
        (m, slope, weight) => {
          const shape = Array.from({ length: m }, (_, i) => 10 * Math.sin((2 * Math.PI * i) / m) + (i % 3));
          const mean = shape.reduce((a, b) => a + b, 0) / m;
          const y = (t: number) => 100 + slope * t + shape[t % m]! - mean;
          const hw = new HoltWinters({ season: m, alpha: weight, beta: weight / 2, gamma: weight, minDeviation: 1e-6 });
          for (let t = 0; t < 2 * m; t++) expect(hw.observe(y(t)).ready).toBe(false);
          for (let t = 2 * m; t < 6 * m; t++) {
            const r = hw.observe(y(t));
            expect(r.ready).toBe(true);
            expect(Math.abs(r.forecast - y(t))).toBeLessThan(1e-7 * Math.max(1, Math.abs(y(t))));
            expect(r.violation).toBe(false);
          }
        },
      ),
      { numRuns: 100 },
    );
  });

  // Brutlag's failure rule: threshold violations within a moving window (7 of 9 by default, [M]).
  it('one spike is a violation, a sustained shift becomes a failure', () => {
    const m = 12;
    const base = (t: number) => 50 + 10 * Math.cos((2 * Math.PI * t) / m) + ((t * 7) % 5) - 2;
    const hw = new HoltWinters({ season: m });
    let t = 0;
    for (; t < 20 * m; t++) hw.observe(base(t));
    const spike = hw.observe(base(t++) + 100);
    expect(spike.violation).toBe(true);
    expect(spike.failure).toBe(false);
    for (let i = 0; i < 3 * m; i++) hw.observe(base(t++));
    const flags: boolean[] = [];
    for (let i = 0; i < 9; i++) flags.push(hw.observe(base(t++) + 200).failure);
    expect(flags.slice(0, 6).every((f) => !f)).toBe(true);
    expect(flags[6]).toBe(true); // 7th consecutive violation
  });

  it('rejects a season shorter than 2', () => {
    expect(() => new HoltWinters({ season: 1 })).toThrow(RangeError);
  });
});
