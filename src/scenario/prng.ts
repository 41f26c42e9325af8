/**
 * Seeded pseudo-random numbers for the scenario generator: SplitMix32 (a Weyl sequence with step
 * 0x9E3779B9 passed through the MurmurHash3 32-bit finaliser). Same seed, same sequence, on every
 * platform: only integer ops and Math.imul; the float helpers use Math.log/cos, which V8 computes with
 * its own fdlibm port, so they are reproducible for a given Node release.
 */
export class Prng {
  private state: number;
  private spare = NaN;

  constructor(seed: number) {
    this.state = seed >>> 0;
  }

  /** Uniform unsigned 32-bit integer. */
  u32(): number {
    this.state = (this.state + 0x9e3779b9) >>> 0;
    let z = this.state;
    z = Math.imul(z ^ (z >>> 16), 0x85ebca6b);
    z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35);
    return (z ^ (z >>> 16)) >>> 0;
  }

  /** Uniform in [0, 1). */
  float(): number {
    return this.u32() / 4294967296;
  }

  /** Uniform integer in [0, n). */
  int(n: number): number {
    return Math.floor(this.float() * n);
  }

  /** Uniform in [lo, hi). */
  range(lo: number, hi: number): number {
    return lo + (hi - lo) * this.float();
  }

  chance(p: number): boolean {
    return this.float() < p;
  }

  pick<T>(items: readonly T[]): T {
    return items[this.int(items.length)]!;
  }

  /** Exponential with the given mean (inter-arrival times of a Poisson process). */
  exp(mean: number): number {
    return -mean * Math.log(1 - this.float());
  }

  /** Standard normal by Box-Muller, keeping the second value for the next call. */
  normal(): number {
    if (!Number.isNaN(this.spare)) {
      const s = this.spare;
      this.spare = NaN;
      return s;
    }
    const u = 1 - this.float();
    const v = this.float();
    const r = Math.sqrt(-2 * Math.log(u));
    this.spare = r * Math.sin(2 * Math.PI * v);
    return r * Math.cos(2 * Math.PI * v);
  }

  /** Log-normal with the given median and log-space sigma: sizes with a long right tail. */
  logNormal(median: number, sigma: number): number {
    return median * Math.exp(sigma * this.normal());
  }

  /** A child generator whose sequence depends only on this one's seed and `salt`. */
  fork(salt: number): Prng {
    return new Prng((this.u32() ^ Math.imul(salt + 1, 0x27d4eb2d)) >>> 0);
  }
}
