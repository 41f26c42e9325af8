/**
 * Robust EWMA band: an exponentially weighted level and mean absolute deviation per feature
 * (EWMA: Roberts, Technometrics 1959; METHODS.md 7.1), computed in a transform space the caller picks:
 * `identity`, or `log1p` for counts and volumes (tames their skew, METHODS.md 7.3 note).
 *
 * Update for a value y = T(x), with n windows of history:
 *   r = clip(y) - level;  level += lambda_n * r;  dev = (1 - lambda_d) * dev + lambda_d * |r|
 * - Warm-up: lambda_n = max(lambda, 1 / (n + 1)) and lambda_d = max(lambda, 1 / n), so the first
 *   windows are a plain running mean (no dependence on a made-up start value).
 * - Huber-like clipping once n >= clipAfter: y is clipped to level +- clip * sigma, so one attack window
 *   moves the level by at most lambda * clip * sigma.
 * - sigma = max(1.2533 * dev, floor): sqrt(pi / 2) = 1.2533 turns a mean absolute deviation into a
 *   standard deviation for normal data. The floor is max(minSpread, minRelSpread * level) in the
 *   ORIGINAL units (default 1 count and 1 %, METHODS.md 7.3 note), mapped into the transform space.
 * - Silent windows (value 0) are applied lazily by `observeZeros(k)`: step by step while warm-up or
 *   clipping still changes the outcome (a bounded loop), then in closed form:
 *   level_k = (1 - lambda)^k level,  dev_k = (1 - lambda)^k dev + k lambda (1 - lambda)^(k-1) |level|.
 * `spread()` is sigma in the transform space; band edges map back through the inverse transform, so a
 * log1p band is asymmetric in the original units.
 */

export type Transform = 'identity' | 'log1p';

export interface EwmaOptions {
  /** Smoothing weight per window, 0 < lambda <= 1 (default 0.1). */
  lambda?: number;
  transform?: Transform;
  /** Clip half-width in sigmas (default 3). */
  clip?: number;
  /** Windows of history before clipping starts (default 12, the readiness threshold of DESIGN.md 6). */
  clipAfter?: number;
  /** Smallest sigma in original units (default 1: one count). */
  minSpread?: number;
  /** Smallest sigma as a fraction of the expected value in original units (default 0.01). */
  minRelSpread?: number;
}

/** sqrt(pi / 2): sigma / E|X - mu| for a normal distribution. */
export const MEAN_ABS_DEV_TO_SIGMA = Math.sqrt(Math.PI / 2);

/** Steps simulated one by one at most in observeZeros before the closed form takes over. */
const MAX_ZERO_STEPS = 256;

/**
 * sqrt(lambda / (2 - lambda) * (1 - (1 - lambda)^(2t))): the EWMA statistic's standard deviation in
 * units of the data's sigma after t windows (Roberts 1959; METHODS.md 7.1). For control limits on the
 * level itself; t = Infinity gives the asymptotic factor.
 */
export function ewmaLimitFactor(lambda: number, t = Infinity): number {
  const bracket = Number.isFinite(t) ? 1 - (1 - lambda) ** (2 * t) : 1;
  return Math.sqrt((lambda / (2 - lambda)) * bracket);
}

/** Resolved options plus the stateless update rules; shared by EwmaBand and BaselineBank. */
export class EwmaRule {
  readonly lambda: number;
  readonly transform: Transform;
  readonly clip: number;
  readonly clipAfter: number;
  readonly minSpread: number;
  readonly minRelSpread: number;

  constructor(o: EwmaOptions = {}) {
    this.lambda = o.lambda ?? 0.1;
    this.transform = o.transform ?? 'identity';
    this.clip = o.clip ?? 3;
    this.clipAfter = o.clipAfter ?? 12;
    this.minSpread = o.minSpread ?? 1;
    this.minRelSpread = o.minRelSpread ?? 0.01;
    if (!(this.lambda > 0 && this.lambda <= 1)) throw new RangeError(`lambda must be in (0, 1], got ${this.lambda}`);
    if (!(this.clip > 0)) throw new RangeError('clip must be positive');
  }

  forward(x: number): number {
    return this.transform === 'log1p' ? Math.log1p(Math.max(0, x)) : x;
  }

  inverse(y: number): number {
    return this.transform === 'log1p' ? Math.max(0, Math.expm1(y)) : y;
  }

  /** Sigma in the transform space for a level and mean absolute deviation there. */
  sigma(level: number, dev: number): number {
    return Math.max(MEAN_ABS_DEV_TO_SIGMA * dev, this.floor(level));
  }

  /** The spread floor, max(minSpread, minRelSpread * expected) in original units, as a transform-space width. */
  floor(level: number): number {
    if (this.transform === 'identity') return Math.max(this.minSpread, this.minRelSpread * Math.abs(level));
    const e = Math.max(0, Math.expm1(level));
    return Math.log1p(Math.max(this.minSpread, this.minRelSpread * e) / (e + 1));
  }

  /** One window with transform-space value y; writes [level, dev] to out. */
  step(level: number, dev: number, n: number, y: number, out: Float64Array): void {
    if (n === 0) {
      out[0] = y;
      out[1] = 0;
      return;
    }
    if (n >= this.clipAfter) {
      const half = this.clip * this.sigma(level, dev);
      if (y > level + half) y = level + half;
      else if (y < level - half) y = level - half;
    }
    const r = y - level;
    const ln = Math.max(this.lambda, 1 / (n + 1));
    const ld = Math.max(this.lambda, 1 / n);
    out[0] = level + ln * r;
    out[1] = (1 - ld) * dev + ld * Math.abs(r);
  }

  /** k silent windows (x = 0, which is 0 in both transforms); writes [level, dev] to out. */
  zeros(level: number, dev: number, n: number, k: number, out: Float64Array): void {
    let steps = 0;
    while (k > 0 && steps < MAX_ZERO_STEPS && (n < 1 / this.lambda + 1 || this.zeroIsClipped(level, dev, n))) {
      this.step(level, dev, n, 0, out);
      level = out[0]!;
      dev = out[1]!;
      n++;
      k--;
      steps++;
    }
    if (k > 0) {
      // Warm-up over and clipping no longer binds (it cannot bind again: dev / |level| only grows).
      const keep = (1 - this.lambda) ** k;
      const decayedDev = keep * dev + k * this.lambda * (1 - this.lambda) ** (k - 1) * Math.abs(level);
      level *= keep;
      dev = decayedDev;
    }
    out[0] = level;
    out[1] = dev;
  }

  private zeroIsClipped(level: number, dev: number, n: number): boolean {
    return n >= this.clipAfter && Math.abs(level) > this.clip * this.sigma(level, dev);
  }
}

const out = new Float64Array(2);

/** One feature's EWMA band as a small object (BaselineBank keeps the same state in typed arrays). */
export class EwmaBand {
  readonly rule: EwmaRule;
  private level = 0;
  private dev = 0;
  private windows = 0;

  constructor(options: EwmaOptions | EwmaRule = {}) {
    this.rule = options instanceof EwmaRule ? options : new EwmaRule(options);
  }

  /** Windows of history. */
  get n(): number {
    return this.windows;
  }

  /** Learns one window's value; a non-finite x is ignored. */
  observe(x: number): void {
    if (!Number.isFinite(x)) return;
    this.rule.step(this.level, this.dev, this.windows, this.rule.forward(x), out);
    this.level = out[0]!;
    this.dev = out[1]!;
    this.windows++;
  }

  /** Applies k silent windows (x = 0). */
  observeZeros(k: number): void {
    if (k <= 0) return;
    this.rule.zeros(this.level, this.dev, this.windows, k, out);
    this.level = out[0]!;
    this.dev = out[1]!;
    this.windows += k;
  }

  /** Expected value in original units. */
  expected(): number {
    return this.rule.inverse(this.level);
  }

  /** Sigma in the transform space (floored). */
  spread(): number {
    return this.rule.sigma(this.level, this.dev);
  }

  low(z: number): number {
    return this.rule.inverse(this.level - z * this.spread());
  }

  high(z: number): number {
    return this.rule.inverse(this.level + z * this.spread());
  }

  /** (T(x) - level) / sigma: x is above high(z) exactly when score(x) > z. */
  score(x: number): number {
    return (this.rule.forward(x) - this.level) / this.spread();
  }
}
