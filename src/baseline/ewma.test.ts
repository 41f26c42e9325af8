import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { EwmaBand, MEAN_ABS_DEV_TO_SIGMA, ewmaLimitFactor } from './ewma.js';

/** Deterministic normal deviates: mulberry32 uniform + Box-Muller (common practice, no source). */
function normals(seed: number): () => number {
  let s = seed >>> 0;
  const uniform = () => {
    s = (s + 0x6d2b79f5) >>> 0;
    let t = s;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  return () => Math.sqrt(-2 * Math.log(1 - uniform())) * Math.cos(2 * Math.PI * uniform());
}

describe('EWMA constants', () => {
  // METHODS.md 7.1 / row 35 [C]: sqrt(lambda / (2 - lambda)) = 0.2294 (0.1), 1/3 (0.2), 0.4201 (0.3).
  it('limit factor [METHODS row 35]', () => {
    expect(ewmaLimitFactor(0.2)).toBeCloseTo(1 / 3, 12);
    expect(ewmaLimitFactor(0.1)).toBeCloseTo(0.2294, 4);
    expect(ewmaLimitFactor(0.3)).toBeCloseTo(0.4201, 4);
    expect(ewmaLimitFactor(0.2, 1)).toBeCloseTo(0.2, 12); // bracket 1 - 0.8^2 = 0.36
  });
  // sigma / mean absolute deviation = sqrt(pi/2) for a normal distribution (standard result, from memory).
  it('mean absolute deviation to sigma', () => {
    expect(MEAN_ABS_DEV_TO_SIGMA).toBeCloseTo(1.2533, 4);
  });
});

describe('EwmaBand on in-control normal data', () => {
  // Roberts 1959 (METHODS.md 7.1): the EWMA level's sd tends to sigma * sqrt(lambda / (2 - lambda)).
  it('level variance matches the EWMA limit factor; spread estimates sigma', () => {
    const rnd = normals(7);
    const b = new EwmaBand({ lambda: 0.2, clip: 1e9, minSpread: 0 });
    const mu = 50;
    const sigma = 4;
    let sum = 0;
    let sumSq = 0;
    let spreadSum = 0;
    const n = 20_000;
    for (let i = 0; i < 200; i++) b.observe(mu + sigma * rnd());
    for (let i = 0; i < n; i++) {
      b.observe(mu + sigma * rnd());
      const e = b.expected();
      sum += e;
      sumSq += e * e;
      spreadSum += b.spread();
    }
    const sd = Math.sqrt(sumSq / n - (sum / n) ** 2);
    expect(sum / n).toBeCloseTo(mu, 0);
    expect(sd / (sigma * ewmaLimitFactor(0.2))).toBeGreaterThan(0.9);
    expect(sd / (sigma * ewmaLimitFactor(0.2))).toBeLessThan(1.1);
    // Residuals against the previous level have variance sigma^2 (1 + lambda / (2 - lambda)).
    const predictionSigma = sigma * Math.sqrt(1 + ewmaLimitFactor(0.2) ** 2);
    expect(spreadSum / n / predictionSigma).toBeGreaterThan(0.93);
    expect(spreadSum / n / predictionSigma).toBeLessThan(1.07);
  });
});

describe('EwmaBand behaviour (our design, no outside source)', () => {
  it('warm-up is a running mean', () => {
    const b = new EwmaBand({ lambda: 0.1 });
    for (const x of [2, 4, 6]) b.observe(x);
    expect(b.expected()).toBeCloseTo(4, 12);
    expect(b.n).toBe(3);
  });

  it('one attack window moves the level by at most lambda * clip * sigma', () => {
    const rnd = normals(3);
    const b = new EwmaBand({ lambda: 0.1, transform: 'log1p' });
    for (let i = 0; i < 100; i++) b.observe(Math.round(100 + 10 * rnd()));
    const before = Math.log1p(b.expected());
    const sigma = b.spread();
    b.observe(1e6);
    const after = Math.log1p(b.expected());
    expect(after - before).toBeLessThanOrEqual(0.1 * 3 * sigma + 1e-12);
    expect(b.expected()).toBeLessThan(140);
  });

  it('floors the spread: 1 count or 1 % of the level, in original units', () => {
    const flat = new EwmaBand();
    for (let i = 0; i < 20; i++) flat.observe(1000);
    expect(flat.spread()).toBeCloseTo(10, 10);
    const small = new EwmaBand();
    for (let i = 0; i < 20; i++) small.observe(5);
    expect(small.spread()).toBe(1);
    const silentCounts = new EwmaBand({ transform: 'log1p' });
    for (let i = 0; i < 20; i++) silentCounts.observe(0);
    expect(silentCounts.spread()).toBeCloseTo(Math.LN2, 12); // log1p(0 + 1) - log1p(0)
    expect(silentCounts.high(3)).toBeCloseTo(7, 10); // expm1(3 ln 2)
    expect(silentCounts.low(3)).toBe(0);
  });

  it('score and band edges agree: score(x) > z exactly when x > high(z)', () => {
    const b = new EwmaBand({ transform: 'log1p' });
    for (let i = 0; i < 30; i++) b.observe(200 + (i % 5) * 10);
    const high = b.high(3.09);
    expect(b.score(high * 1.001)).toBeGreaterThan(3.09);
    expect(b.score(high * 0.999)).toBeLessThan(3.09);
  });

  it('observeZeros(k) equals k single zero observations (warm-up, clipping and closed form)', () => {
    fc.assert(
      fc.property(
        fc.array(fc.integer({ min: 0, max: 5000 }), { maxLength: 40 }),
        fc.integer({ min: 1, max: 600 }),
        fc.constantFrom('identity' as const, 'log1p' as const),
        fc.constantFrom(0.05, 0.1, 0.3),
        (history, k, transform, lambda) => {
          const lazy = new EwmaBand({ transform, lambda });
          const eager = new EwmaBand({ transform, lambda });
          for (const x of history) {
            lazy.observe(x);
            eager.observe(x);
          }
          lazy.observeZeros(k);
          for (let i = 0; i < k; i++) eager.observe(0);
          expect(lazy.n).toBe(eager.n);
          const tol = (a: number, b: number) => Math.abs(a - b) <= 1e-9 * Math.max(1, Math.abs(b));
          expect(tol(lazy.expected(), eager.expected())).toBe(true);
          expect(tol(lazy.spread(), eager.spread())).toBe(true);
        },
      ),
      { numRuns: 300 },
    );
  });
});
