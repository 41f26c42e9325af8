/**
 * Seasonal profile of one feature: hour-of-day (24 slots) and hour-of-week (168 slots), each slot an
 * EWMA over cycles of the hour's mean and of the mean squared deviation of single windows from the
 * slot's level. A cheaper stand-in for double-seasonal Holt-Winters: a per-hour-of-week profile
 * (METHODS.md 7.4, last note), with Huber-like clipping as in ewma.ts.
 *
 * - Slots are hourly for both profiles, so one open "visit" (the windows of the current clock hour)
 *   feeds both; a visit is folded into its slots when the next hour starts:
 *     level += l (mean - level);  msd = (1 - l) msd + l (withinVariance + (mean - level_before)^2)
 *   with l = max(lambda, 1 / (cycles + 1)) (so the first cycles average equally). One fold = one cycle.
 * - A slot serves expectations only after `minCycles` (default 4) cycles (DESIGN.md 6); the weekly slot
 *   wins once it has them, else the daily slot, else `expectedAt` returns null and the caller's
 *   non-seasonal band serves. Values from a ready slot are clipped to level +- clip * spread before
 *   they are learned.
 * - Time: slots index UTC hours shifted by a fixed `offsetMinutes` (e.g. +60 for a site on UTC+1),
 *   so "02:00" means the site's clock when the offset is its standard offset. A fixed offset does not
 *   follow daylight saving time: twice a year the local hours shift by one slot for a while, which
 *   clipping absorbs. Hour-of-week slot 0 is Monday 00:00 (1970-01-01, hour 0, was a Thursday).
 * - Values are in whatever space the caller feeds (FeatureBaseline feeds its transform space);
 *   `spreadFloor` maps a level to the smallest spread in that space.
 * Memory: one Float32Array of 3 * (24 + 168) values (2,304 octets) plus a few numbers, allocated by the
 * caller only for features with enough history.
 */

const HOUR_MS = 3_600_000;
const DAY_SLOTS = 24;
const WEEK_SLOTS = 168;
/** Hours from the epoch (a Thursday 00:00) to the next Monday 00:00, modulo a week. */
const WEEK_SHIFT = 72;
// Float32 layout: daily level, msd, cycles, then weekly level, msd, cycles.
const D_LEVEL = 0;
const D_MSD = DAY_SLOTS;
const D_CYCLES = 2 * DAY_SLOTS;
const W_LEVEL = 3 * DAY_SLOTS;
const W_MSD = W_LEVEL + WEEK_SLOTS;
const W_CYCLES = W_LEVEL + 2 * WEEK_SLOTS;
const FLOATS = 3 * (DAY_SLOTS + WEEK_SLOTS);
const VISIT_FIELDS = 10;
const FORMAT_VERSION = 1;
const HEADER = 8;

export interface SeasonalOptions {
  /** Minutes added to UTC before taking the hour (fixed offset; default 0 = UTC). */
  offsetMinutes?: number;
  /** Weight of a new cycle once warmed up (default 0.25). */
  lambda?: number;
  /** Clip half-width in spreads (default 3). */
  clip?: number;
  /** Cycles before a slot serves (default 4, DESIGN.md 6). */
  minCycles?: number;
  /** Smallest spread for a level, in the caller's space (default none). */
  spreadFloor?: (level: number) => number;
}

export interface SeasonalExpectation {
  expected: number;
  spread: number;
  cycles: number;
  weekly: boolean;
}

/** Resolved options, shared by all profiles of a bank. */
export class SeasonalConfig {
  readonly offsetMs: number;
  readonly lambda: number;
  readonly clip: number;
  readonly minCycles: number;
  readonly spreadFloor: (level: number) => number;
  constructor(o: SeasonalOptions = {}) {
    this.offsetMs = (o.offsetMinutes ?? 0) * 60_000;
    this.lambda = o.lambda ?? 0.25;
    this.clip = o.clip ?? 3;
    this.minCycles = o.minCycles ?? 4;
    this.spreadFloor = o.spreadFloor ?? (() => 0);
    if (!(this.lambda > 0 && this.lambda <= 1)) throw new RangeError('seasonal lambda must be in (0, 1]');
  }
  hourOf(tMs: number): number {
    return Math.floor((tMs + this.offsetMs) / HOUR_MS);
  }
}

const mod = (a: number, m: number) => ((a % m) + m) % m;

export class SeasonalProfile {
  readonly config: SeasonalConfig;
  private readonly slots = new Float32Array(FLOATS);
  // The open visit: its clock hour, window count, clipped sums for the daily and weekly slot, and the
  // clip edges fixed when the visit opened.
  private visitHour = NaN;
  private count = 0;
  private dSum = 0;
  private dSq = 0;
  private wSum = 0;
  private wSq = 0;
  private dLo = -Infinity;
  private dHi = Infinity;
  private wLo = -Infinity;
  private wHi = Infinity;

  constructor(config: SeasonalConfig | SeasonalOptions = {}) {
    this.config = config instanceof SeasonalConfig ? config : new SeasonalConfig(config);
  }

  /** Learns value y for the window starting at tMs (windows in time order). */
  observe(y: number, tMs: number): void {
    this.addRepeated(y, this.config.hourOf(tMs), 1);
  }

  /** Learns k windows of value 0 starting at fromMs, windowMs apart; O(hours spanned). */
  observeZeros(fromMs: number, k: number, windowMs: number): void {
    let t = fromMs;
    while (k > 0) {
      const hour = this.config.hourOf(t);
      const hourEnd = (hour + 1) * HOUR_MS - this.config.offsetMs;
      const inHour = Math.min(k, Math.max(1, Math.ceil((hourEnd - t) / windowMs)));
      this.addRepeated(0, hour, inHour);
      t += inHour * windowMs;
      k -= inHour;
    }
  }

  /** Seasonal expectation for the window starting at tMs, or null while no slot has enough cycles. */
  expectedAt(tMs: number, out?: SeasonalExpectation): SeasonalExpectation | null {
    const hour = this.config.hourOf(tMs);
    const w = mod(hour + WEEK_SHIFT, WEEK_SLOTS);
    const d = mod(hour, DAY_SLOTS);
    const s = this.slots;
    const min = this.config.minCycles;
    let level: number;
    let msd: number;
    let cycles: number;
    let weekly: boolean;
    if (s[W_CYCLES + w]! >= min) {
      level = s[W_LEVEL + w]!;
      msd = s[W_MSD + w]!;
      cycles = s[W_CYCLES + w]!;
      weekly = true;
    } else if (s[D_CYCLES + d]! >= min) {
      level = s[D_LEVEL + d]!;
      msd = s[D_MSD + d]!;
      cycles = s[D_CYCLES + d]!;
      weekly = false;
    } else {
      return null;
    }
    const r = out ?? { expected: 0, spread: 0, cycles: 0, weekly: false };
    r.expected = level;
    r.spread = Math.max(Math.sqrt(msd), this.config.spreadFloor(level));
    r.cycles = cycles;
    r.weekly = weekly;
    return r;
  }

  memoryBytes(): number {
    return this.slots.byteLength + 160;
  }

  /** Length of toBytes() output. */
  static readonly BYTES = HEADER + 8 * VISIT_FIELDS + 4 * FLOATS;

  toBytes(): Uint8Array {
    const b = new Uint8Array(SeasonalProfile.BYTES);
    this.writeTo(new DataView(b.buffer, b.byteOffset, b.byteLength), b, 0);
    return b;
  }

  /** Writes toBytes() output at `off` of zeroed bytes `b` (`dv` views b, from its first byte). */
  writeTo(dv: DataView, b: Uint8Array, off: number): void {
    b[off] = FORMAT_VERSION;
    const visit = [this.visitHour, this.count, this.dSum, this.dSq, this.wSum, this.wSq, this.dLo, this.dHi, this.wLo, this.wHi];
    for (let i = 0; i < VISIT_FIELDS; i++) dv.setFloat64(off + HEADER + 8 * i, visit[i]!, true);
    for (let i = 0; i < FLOATS; i++) dv.setFloat32(off + HEADER + 8 * VISIT_FIELDS + 4 * i, this.slots[i]!, true);
  }

  /** Inverse of toBytes; null when the bytes are not a profile of this format version. */
  static fromBytes(b: Uint8Array, config: SeasonalConfig): SeasonalProfile | null {
    if (b.length !== HEADER + 8 * VISIT_FIELDS + 4 * FLOATS || b[0] !== FORMAT_VERSION) return null;
    const dv = new DataView(b.buffer, b.byteOffset, b.byteLength);
    const f = (i: number) => dv.getFloat64(HEADER + 8 * i, true);
    const p = new SeasonalProfile(config);
    p.visitHour = f(0);
    p.count = f(1);
    p.dSum = f(2);
    p.dSq = f(3);
    p.wSum = f(4);
    p.wSq = f(5);
    p.dLo = f(6);
    p.dHi = f(7);
    p.wLo = f(8);
    p.wHi = f(9);
    for (let i = 0; i < FLOATS; i++) p.slots[i] = dv.getFloat32(HEADER + 8 * VISIT_FIELDS + 4 * i, true);
    return p;
  }

  private addRepeated(y: number, hour: number, times: number): void {
    if (hour !== this.visitHour) {
      this.closeVisit();
      this.openVisit(hour);
    }
    const yd = y < this.dLo ? this.dLo : y > this.dHi ? this.dHi : y;
    const yw = y < this.wLo ? this.wLo : y > this.wHi ? this.wHi : y;
    this.dSum += times * yd;
    this.dSq += times * yd * yd;
    this.wSum += times * yw;
    this.wSq += times * yw * yw;
    this.count += times;
  }

  private openVisit(hour: number): void {
    this.visitHour = hour;
    this.count = 0;
    this.dSum = this.dSq = this.wSum = this.wSq = 0;
    const d = mod(hour, DAY_SLOTS);
    const w = mod(hour + WEEK_SHIFT, WEEK_SLOTS);
    const dLevel = this.slots[D_LEVEL + d]!;
    const wLevel = this.slots[W_LEVEL + w]!;
    const dHalf = this.clipHalfWidth(D_LEVEL + d, D_MSD + d, D_CYCLES + d);
    const wHalf = this.clipHalfWidth(W_LEVEL + w, W_MSD + w, W_CYCLES + w);
    this.dLo = dLevel - dHalf;
    this.dHi = dLevel + dHalf;
    this.wLo = wLevel - wHalf;
    this.wHi = wLevel + wHalf;
  }

  /** Clip half-width for a slot: unbounded until it is ready. Runs once per visit (per hour). */
  private clipHalfWidth(levelAt: number, msdAt: number, cyclesAt: number): number {
    const s = this.slots;
    if (s[cyclesAt]! < this.config.minCycles) return Infinity;
    return this.config.clip * Math.max(Math.sqrt(s[msdAt]!), this.config.spreadFloor(s[levelAt]!));
  }

  private closeVisit(): void {
    if (this.count === 0) return;
    const hour = this.visitHour;
    this.fold(D_LEVEL + mod(hour, DAY_SLOTS), D_MSD + mod(hour, DAY_SLOTS), D_CYCLES + mod(hour, DAY_SLOTS), this.dSum, this.dSq);
    const w = mod(hour + WEEK_SHIFT, WEEK_SLOTS);
    this.fold(W_LEVEL + w, W_MSD + w, W_CYCLES + w, this.wSum, this.wSq);
    this.count = 0;
  }

  private fold(levelAt: number, msdAt: number, cyclesAt: number, sum: number, sq: number): void {
    const s = this.slots;
    const mean = sum / this.count;
    const within = Math.max(0, sq / this.count - mean * mean);
    const cycles = s[cyclesAt]!;
    if (cycles === 0) {
      s[levelAt] = mean;
      s[msdAt] = within;
    } else {
      const l = Math.max(this.config.lambda, 1 / (cycles + 1));
      const level = s[levelAt]!;
      s[msdAt] = (1 - l) * s[msdAt]! + l * (within + (mean - level) * (mean - level));
      s[levelAt] = level + l * (mean - level);
    }
    s[cyclesAt] = cycles + 1;
  }
}
