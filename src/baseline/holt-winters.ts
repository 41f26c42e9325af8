/**
 * Additive Holt-Winters forecasting with Brutlag's confidence band and window rule (Brutlag,
 * "Aberrant Behavior Detection in Time Series for Network Monitoring", LISA 2000; METHODS.md 7.4).
 * An alternative to the seasonal profile for one regularly sampled series (season length m samples).
 *
 *   forecast  f_t = a + b + c[s]                       (s = t mod m, state after t - 1)
 *   level     a'  = alpha (y - c[s]) + (1 - alpha)(a + b)
 *   trend     b'  = beta (a' - a) + (1 - beta) b
 *   season    c[s] = gamma (y - a') + (1 - gamma) c[s]
 *   deviation d[s] = gamma |y - f_t| + (1 - gamma) d[s]  (Brutlag: same gamma)
 *   band      f_t +- delta * max(d[s], minDeviation), using d[s] from one season ago
 * A violation is y outside the band; a failure is >= `threshold` violations among the last `window`
 * samples (Brutlag's example rule 7 of 9, from memory: METHODS.md marks it [M]).
 * Initialisation needs two full seasons (METHODS.md 7.7): level and trend from the two season means,
 * seasonal terms from the detrended average of both seasons, deviations from their disagreement.
 * The default alpha, beta, gamma are ours, not Brutlag's (his are not reproduced in METHODS.md):
 * tune them by one-step squared error on training data.
 */

export interface HoltWintersOptions {
  /** Season length in samples, >= 2. */
  season: number;
  alpha?: number;
  beta?: number;
  gamma?: number;
  /** Band half-width in deviations, between 2 and 3 per Brutlag (default 2.5). */
  delta?: number;
  /** Smallest deviation used for the band (default 0). */
  minDeviation?: number;
  /** Moving window length for the failure rule (default 9, at most 32). */
  window?: number;
  /** Violations in the window that make a failure (default 7). */
  threshold?: number;
}

export interface HoltWintersStep {
  /** False during the two initialisation seasons (no forecast yet). */
  ready: boolean;
  forecast: number;
  low: number;
  high: number;
  violation: boolean;
  failure: boolean;
}

export class HoltWinters {
  readonly season: number;
  private readonly alpha: number;
  private readonly beta: number;
  private readonly gamma: number;
  private readonly delta: number;
  private readonly minDeviation: number;
  private readonly window: number;
  private readonly threshold: number;
  private readonly seasonal: Float64Array;
  private readonly deviation: Float64Array;
  /** The first two seasons, kept until initialisation. */
  private warmup: Float64Array | null;
  private t = 0;
  private level = 0;
  private trend = 0;
  /** Violation bits of the last `window` samples, newest in bit 0. */
  private recent = 0;
  private readonly step: HoltWintersStep = { ready: false, forecast: NaN, low: NaN, high: NaN, violation: false, failure: false };

  constructor(o: HoltWintersOptions) {
    if (!Number.isInteger(o.season) || o.season < 2) throw new RangeError('season must be an integer >= 2');
    this.season = o.season;
    this.alpha = o.alpha ?? 0.2;
    this.beta = o.beta ?? 0.01;
    this.gamma = o.gamma ?? 0.2;
    this.delta = o.delta ?? 2.5;
    this.minDeviation = o.minDeviation ?? 0;
    this.window = o.window ?? 9;
    this.threshold = o.threshold ?? 7;
    if (this.window < 1 || this.window > 32) throw new RangeError('window must be in 1..32');
    this.seasonal = new Float64Array(o.season);
    this.deviation = new Float64Array(o.season);
    this.warmup = new Float64Array(2 * o.season);
  }

  /** Feeds the next sample; returns a reused result object. */
  observe(y: number): Readonly<HoltWintersStep> {
    const r = this.step;
    const m = this.season;
    if (this.warmup !== null) {
      this.warmup[this.t++] = y;
      if (this.t === 2 * m) this.initialise(this.warmup);
      r.ready = false;
      r.forecast = r.low = r.high = NaN;
      r.violation = r.failure = false;
      return r;
    }
    const s = this.t % m;
    const forecast = this.level + this.trend + this.seasonal[s]!;
    const half = this.delta * Math.max(this.deviation[s]!, this.minDeviation);
    r.ready = true;
    r.forecast = forecast;
    r.low = forecast - half;
    r.high = forecast + half;
    r.violation = y < r.low || y > r.high;
    this.recent = ((this.recent << 1) | (r.violation ? 1 : 0)) & (this.window === 32 ? -1 : (1 << this.window) - 1);
    r.failure = popcount(this.recent) >= this.threshold;

    const level = this.alpha * (y - this.seasonal[s]!) + (1 - this.alpha) * (this.level + this.trend);
    this.trend = this.beta * (level - this.level) + (1 - this.beta) * this.trend;
    this.level = level;
    this.seasonal[s] = this.gamma * (y - level) + (1 - this.gamma) * this.seasonal[s]!;
    this.deviation[s] = this.gamma * Math.abs(y - forecast) + (1 - this.gamma) * this.deviation[s]!;
    this.t++;
    return r;
  }

  private initialise(w: Float64Array): void {
    const m = this.season;
    let mean1 = 0;
    let mean2 = 0;
    for (let i = 0; i < m; i++) {
      mean1 += w[i]!;
      mean2 += w[m + i]!;
    }
    mean1 /= m;
    mean2 /= m;
    const trend = (mean2 - mean1) / m;
    for (let i = 0; i < m; i++) {
      // Each season mean sits at the season's centre; remove the trend within the season too.
      const offset = trend * (i - (m - 1) / 2);
      const e1 = w[i]! - mean1 - offset;
      const e2 = w[m + i]! - mean2 - offset;
      this.seasonal[i] = (e1 + e2) / 2;
      this.deviation[i] = Math.abs(e1 - e2) / 2;
    }
    this.trend = trend;
    this.level = mean2 + (trend * (m - 1)) / 2; // level at the last sample of season two
    this.warmup = null;
  }
}

function popcount(x: number): number {
  x -= (x >>> 1) & 0x55555555;
  x = (x & 0x33333333) + ((x >>> 2) & 0x33333333);
  return (Math.imul((x + (x >>> 4)) & 0x0f0f0f0f, 0x01010101) >>> 24) & 0xff;
}
