import { describe, expect, it } from 'vitest';
import type { FeatureSeries } from '../../src/report/data.js';
import { downsample } from '../../src/report/downsample.js';

function series(n: number): FeatureSeries {
  const observed = Float64Array.from({ length: n }, (_, i) => (i === 137 ? 5000 : i % 7));
  const expected = Float64Array.from({ length: n }, (_, i) => (i < 10 ? Number.NaN : 3));
  const low = Float64Array.from({ length: n }, (_, i) => (i < 10 ? Number.NaN : 1 + (i % 3)));
  const high = Float64Array.from({ length: n }, (_, i) => (i < 10 ? Number.NaN : 8 + (i % 5)));
  return { host: '10.60.1.5', feature: 'flows_out', startMs: 0, stepMs: 60_000, observed, expected, low, high, bandFrom: 'baseline', pointWindows: 1 };
}

describe('downsample', () => {
  it('leaves short series alone', () => {
    const s = series(100);
    expect(downsample(s, 600)).toBe(s);
  });

  it('keeps spikes, the outer band edges and the gaps; steps grow by the merge factor', () => {
    const d = downsample(series(1440), 600);
    expect(d.pointWindows).toBe(3);
    expect(d.stepMs).toBe(180_000);
    expect(d.observed.length).toBe(480);
    expect(Math.max(...d.observed)).toBe(5000); // the one-window spike survives
    expect(d.low[10]).toBe(1);
    expect(d.high[10]).toBe(10); // windows 30..32: highs 8, 9, 10
    expect(Number.isNaN(d.expected[0]!)).toBe(true); // windows 0..2 had no band
    expect(d.expected[5]).toBe(3);
  });
});
