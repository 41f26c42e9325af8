import type { FeatureSeries } from './data.js';

/**
 * Shortens a series to at most `maxPoints` by merging runs of k windows: the observed value keeps the
 * run's maximum (a one-window spike must stay visible), the band its outer edges (lowest low, highest
 * high) and the expected value its mean. Series already short enough are returned as they are.
 */
export function downsample(s: FeatureSeries, maxPoints: number): FeatureSeries {
  const n = s.observed.length;
  if (n <= maxPoints) return s;
  const k = Math.ceil(n / maxPoints);
  const m = Math.ceil(n / k);
  const observed = new Float64Array(m), expected = new Float64Array(m), low = new Float64Array(m), high = new Float64Array(m);
  for (let j = 0; j < m; j++) {
    let obs = -Infinity, lo = Infinity, hi = -Infinity, sum = 0, cnt = 0;
    for (let i = j * k; i < Math.min(n, (j + 1) * k); i++) {
      obs = Math.max(obs, s.observed[i]!);
      const e = s.expected[i]!;
      if (Number.isNaN(e)) continue;
      sum += e; cnt++;
      lo = Math.min(lo, s.low[i]!);
      hi = Math.max(hi, s.high[i]!);
    }
    observed[j] = obs;
    expected[j] = cnt > 0 ? sum / cnt : Number.NaN;
    low[j] = cnt > 0 ? lo : Number.NaN;
    high[j] = cnt > 0 ? hi : Number.NaN;
  }
  return { ...s, stepMs: s.stepMs * k, observed, expected, low, high, pointWindows: s.pointWindows * k };
}
