/**
 * Two-sided tabular CUSUM on standardised input (Page, "Continuous inspection schemes", Biometrika
 * 1954; METHODS.md 7.2): C+ = max(0, z - k + C+), C- = max(0, -k - z + C-), alarm when either exceeds h.
 * k = 0.5 is tuned to a 1-sigma shift (use k = delta / 2 for a delta-sigma shift); h = 5 by default.
 * The sums keep running after an alarm until `reset()` (the caller decides when an episode ends).
 */

export interface CusumState {
  upper: number;
  lower: number;
  alarm: boolean;
}

export class Cusum {
  readonly k: number;
  readonly h: number;
  /** Reused result: `update` returns this same object every time (no allocation per window). */
  private readonly state: CusumState = { upper: 0, lower: 0, alarm: false };

  constructor(k = 0.5, h = 5) {
    this.k = k;
    this.h = h;
  }

  /** Feeds one standardised value z = (x - mu0) / sigma. */
  update(z: number): Readonly<CusumState> {
    const s = this.state;
    s.upper = Math.max(0, s.upper + z - this.k);
    s.lower = Math.max(0, s.lower - z - this.k);
    s.alarm = s.upper > this.h || s.lower > this.h;
    return s;
  }

  get upper(): number {
    return this.state.upper;
  }
  get lower(): number {
    return this.state.lower;
  }

  reset(): void {
    this.state.upper = 0;
    this.state.lower = 0;
    this.state.alarm = false;
  }
}
