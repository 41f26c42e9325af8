/**
 * Per (host, feature) baselines: the robust EWMA band (ewma.ts) plus, for features with enough activity,
 * a seasonal profile (seasonal.ts), with the trust rules of DESIGN.md 6 / METHODS.md 7.7:
 * - `ready` only after `readyAfter` (12) windows of history.
 * - The seasonal profile is allocated only after `seasonalAfterActive` (60) windows with a non-zero
 *   value, and serves only per slot after 4 full cycles; until then the EWMA band serves.
 * - Silent windows are zeros, applied lazily: a host seen again after k windows gets k zero windows
 *   (closed form) before its new value. Windows inside `markMissing` intervals (no input at all, e.g.
 *   a capture or exporter gap) are missing instead: up to `maxMissingFraction` (10 %) of a slot's
 *   history is tolerated; past that the slot restarts its warm-up (level, deviation and history
 *   cleared; a seasonal profile is kept, since its 4-cycle gate protects it).
 * - Learning during an anomaly: `observe(x, t, true)` learns x clipped to the band edge at the FIXED
 *   z = 3 (LEARN_CLIP_Z), whatever alpha the detector uses, so alpha never changes what is learned.
 * Call order per window: `band(t, z)` / `score(x, t)` first (history before t), then `observe(x, t)`.
 * `band` and `score` first account the silent windows before t (idempotent), so they update lazily
 * kept state. `markMissing` must be called before any slot is asked about a time after the gap; the
 * interval list is kept for the bank's lifetime (gaps are rare) and is global to the bank, so use one
 * bank per input whose outages are independent.
 *
 * BaselineBank keeps every slot in struct-of-arrays typed arrays: 32 octets per host-feature without a
 * seasonal profile (level and deviation Float32; history, missing and active counts Uint32; last
 * window start Float64; profile index Int32), plus about 2.5 KB per allocated seasonal profile.
 * `slotOf(host, feature)` maps a host index and feature index to a slot. FeatureBaseline is the same
 * model for one feature as an object: a view of a bank slot, or a standalone one-slot bank.
 */
import { EwmaRule, type EwmaOptions } from './ewma.js';
import { SeasonalConfig, SeasonalProfile, type SeasonalExpectation, type SeasonalOptions } from './seasonal.js';

/** Band half-width in sigmas used to clip values learned while anomalous (fixed, independent of alpha). */
export const LEARN_CLIP_Z = 3;

export interface BaselineOptions extends EwmaOptions {
  /** Window length in ms (the spacing of observe() times). */
  windowMs: number;
  /** Features per host, for slotOf (default 1). */
  features?: number;
  /** Windows of history before the band is trusted (default 12, DESIGN.md 6). */
  readyAfter?: number;
  /** Missing windows tolerated as a fraction of history before warm-up restarts (default 0.1). */
  maxMissingFraction?: number;
  /** Seasonal profile options, or false for none (default {}: UTC hours). */
  seasonal?: Omit<SeasonalOptions, 'spreadFloor'> | false;
  /** Non-zero windows before a seasonal profile is allocated (default 60). */
  seasonalAfterActive?: number;
  /**
   * What a window without observe() means for the EWMA band: `zeros` (default) learns a zero;
   * `skip` leaves the band to the host's active windows (an intermittent host's band then describes
   * what it does when it is active, instead of a mixture with its silence). Seasonal profiles learn
   * silent windows as zeros either way: silence at an hour is part of the daily rhythm.
   */
  silence?: 'zeros' | 'skip';
  /** Initial slot capacity (default 1024); the bank doubles as slots are used. */
  initialCapacity?: number;
}

export interface Band {
  /** Expected value, original units. */
  expected: number;
  /** Band edges at the requested z, original units (asymmetric for log1p). */
  low: number;
  high: number;
  /** Sigma in the transform space: score = (T(x) - T(expected)) / spread. */
  spread: number;
  /** At least readyAfter windows of history. */
  ready: boolean;
  /** The seasonal profile supplied expected and spread. */
  seasonal: boolean;
}

/**
 * Growth: by half while small, then in steps of 2 M slots (64 MB): with a million hosts the bank is
 * the largest structure, and geometric growth would leave up to half of it unused.
 */
function nextCapacity(c: number): number {
  return c < 4_000_000 ? Math.ceil(1.5 * c) : c + 2_000_000;
}

const SLOT_HEADER = 32;
const SLOT_VERSION = 1;
const BYTES_PER_SLOT = 4 + 4 + 4 + 4 + 4 + 8 + 4;
// Scratch shared by all banks (single-threaded; nothing is kept across calls).
const stepOut = new Float64Array(2);
const seasonalScratch: SeasonalExpectation = { expected: 0, spread: 0, cycles: 0, weekly: false };

export class BaselineBank {
  readonly rule: EwmaRule;
  readonly windowMs: number;
  readonly features: number;
  readonly readyAfter: number;
  readonly maxMissingFraction: number;
  readonly seasonalAfterActive: number;
  readonly seasonalConfig: SeasonalConfig | null;
  readonly skipSilence: boolean;
  private capacity = 0;
  private level = new Float32Array(0);
  private dev = new Float32Array(0);
  private history = new Uint32Array(0);
  private missing = new Uint32Array(0);
  private active = new Uint32Array(0);
  private last = new Float64Array(0);
  private profileOf = new Int32Array(0);
  private readonly profiles: SeasonalProfile[] = [];
  /** Sorted [from, to) pairs of markMissing intervals. */
  private readonly gaps: number[] = [];
  // centre and sigma (transform space) of the last resolve() call
  private centre = 0;
  private sigma = 0;
  private fromProfile = false;

  constructor(o: BaselineOptions) {
    if (!(o.windowMs > 0)) throw new RangeError('windowMs must be positive');
    this.rule = new EwmaRule(o);
    this.windowMs = o.windowMs;
    this.features = o.features ?? 1;
    this.readyAfter = o.readyAfter ?? 12;
    this.maxMissingFraction = o.maxMissingFraction ?? 0.1;
    this.seasonalAfterActive = o.seasonalAfterActive ?? 60;
    this.skipSilence = o.silence === 'skip';
    const rule = this.rule;
    this.seasonalConfig =
      o.seasonal === false ? null : new SeasonalConfig({ ...o.seasonal, spreadFloor: (level) => rule.floor(level) });
    this.grow(o.initialCapacity ?? 1024);
  }

  slotOf(host: number, feature: number): number {
    return host * this.features + feature;
  }

  /** Windows of history of a slot (0 for an unused slot). */
  historyOf(slot: number): number {
    return slot < this.capacity ? this.history[slot]! : 0;
  }

  /** The slot has learned at least one window (slotToBytes of it is worth keeping). */
  isUsed(slot: number): boolean {
    return slot < this.capacity && !Number.isNaN(this.last[slot]!);
  }

  /** The markMissing intervals so far, as sorted [from, to) pairs (for the state store). */
  missingIntervals(): number[] {
    return [...this.gaps];
  }

  /** Replaces the markMissing intervals with those of missingIntervals() (a restored checkpoint). */
  restoreMissingIntervals(pairs: readonly number[]): void {
    this.gaps.length = 0;
    for (let i = 0; i + 1 < pairs.length; i += 2) this.markMissing(pairs[i]!, pairs[i + 1]!);
  }

  /** Declares that windows starting in [fromMs, toMs) had no input at all (missing, not silent). */
  markMissing(fromMs: number, toMs: number): void {
    if (!(toMs > fromMs)) return;
    let i = this.gaps.length;
    while (i > 0 && this.gaps[i - 2]! > fromMs) i -= 2;
    this.gaps.splice(i, 0, fromMs, toMs);
  }

  /**
   * Learns value x for the window starting at tMs. Windows must come in time order per slot; a window
   * not after the slot's last one, or a non-finite x, is ignored (returns false). `anomalous` learns
   * the clipped value.
   */
  observe(slot: number, x: number, tMs: number, anomalous = false): boolean {
    if (!Number.isFinite(x)) return false;
    if (slot >= this.capacity) this.grow(Math.max(slot + 1, nextCapacity(this.capacity)));
    const last = this.last[slot]!;
    if (tMs <= last) return false;
    this.catchUp(slot, tMs);
    let y = this.rule.forward(x);
    if (anomalous && !Number.isNaN(last)) {
      this.resolve(slot, tMs);
      const half = LEARN_CLIP_Z * this.sigma;
      if (y > this.centre + half) y = this.centre + half;
      else if (y < this.centre - half) y = this.centre - half;
    }
    this.rule.step(this.level[slot]!, this.dev[slot]!, this.history[slot]!, y, stepOut);
    this.level[slot] = stepOut[0]!;
    this.dev[slot] = stepOut[1]!;
    this.history[slot]!++;
    if (x !== 0) this.active[slot]!++;
    const profile = this.profileFor(slot);
    if (profile !== null) profile.observe(y, tMs);
    this.last[slot] = tMs;
    return true;
  }

  /** The band for the window starting at tMs at z sigmas; fills and returns `out` (no allocation if given). */
  band(slot: number, tMs: number, z: number, out?: Band): Band {
    const b = out ?? { expected: 0, low: 0, high: 0, spread: 0, ready: false, seasonal: false };
    if (slot >= this.capacity || Number.isNaN(this.last[slot]!)) {
      b.expected = b.low = b.high = 0;
      b.spread = this.rule.floor(0);
      b.ready = b.seasonal = false;
      return b;
    }
    this.catchUp(slot, tMs);
    this.resolve(slot, tMs);
    b.expected = this.rule.inverse(this.centre);
    b.low = this.rule.inverse(this.centre - z * this.sigma);
    b.high = this.rule.inverse(this.centre + z * this.sigma);
    b.spread = this.sigma;
    b.ready = this.history[slot]! >= this.readyAfter;
    b.seasonal = this.fromProfile;
    return b;
  }

  /** (T(x) - T(expected)) / spread for the window starting at tMs; x > band(z).high exactly when score > z. */
  score(slot: number, x: number, tMs: number): number {
    if (slot >= this.capacity || Number.isNaN(this.last[slot]!)) return this.rule.forward(x) / this.rule.floor(0);
    this.catchUp(slot, tMs);
    this.resolve(slot, tMs);
    return (this.rule.forward(x) - this.centre) / this.sigma;
  }

  /** Typed-array bytes held, including seasonal profiles. */
  memoryBytes(): number {
    let total = this.capacity * BYTES_PER_SLOT;
    for (const p of this.profiles) total += p.memoryBytes();
    return total;
  }

  get seasonalProfiles(): number {
    return this.profiles.length;
  }

  hasSeasonalProfile(slot: number): boolean {
    return slot < this.capacity && this.profileOf[slot]! >= 0;
  }

  /** One slot's state as bytes (little-endian; for the state store). */
  slotToBytes(slot: number): Uint8Array {
    const b = new Uint8Array(this.slotByteLength(slot));
    this.writeSlot(slot, new DataView(b.buffer, b.byteOffset, b.byteLength), b, 0);
    return b;
  }

  /** Length of slotToBytes(slot). */
  slotByteLength(slot: number): number {
    const id = slot < this.capacity ? this.profileOf[slot]! : -1;
    return SLOT_HEADER + (id >= 0 ? SeasonalProfile.BYTES : 0);
  }

  /**
   * Writes slotToBytes(slot) at `off` of zeroed bytes `b` (`dv` views b, from its first byte), so a
   * checkpoint encodes a host's slots into one buffer instead of one per slot.
   */
  writeSlot(slot: number, dv: DataView, b: Uint8Array, off: number): void {
    const id = slot < this.capacity ? this.profileOf[slot]! : -1;
    b[off] = SLOT_VERSION;
    b[off + 1] = id >= 0 ? 1 : 0;
    if (slot < this.capacity) {
      dv.setFloat32(off + 4, this.level[slot]!, true);
      dv.setFloat32(off + 8, this.dev[slot]!, true);
      dv.setUint32(off + 12, this.history[slot]!, true);
      dv.setUint32(off + 16, this.missing[slot]!, true);
      dv.setUint32(off + 20, this.active[slot]!, true);
      dv.setFloat64(off + 24, this.last[slot]!, true);
    } else {
      dv.setFloat64(off + 24, NaN, true);
    }
    if (id >= 0) this.profiles[id]!.writeTo(dv, b, off + SLOT_HEADER);
  }

  /** Restores a slot from slotToBytes output; false (slot untouched) when the bytes do not fit. */
  slotFromBytes(slot: number, b: Uint8Array): boolean {
    if (b.length < SLOT_HEADER || b[0] !== SLOT_VERSION || b[1]! > 1) return false;
    let profile: SeasonalProfile | null = null;
    if (b[1] === 1) {
      if (this.seasonalConfig === null) return false;
      profile = SeasonalProfile.fromBytes(b.subarray(SLOT_HEADER), this.seasonalConfig);
      if (profile === null) return false;
    } else if (b.length !== SLOT_HEADER) return false;
    if (slot >= this.capacity) this.grow(Math.max(slot + 1, nextCapacity(this.capacity)));
    const dv = new DataView(b.buffer, b.byteOffset, b.byteLength);
    this.level[slot] = dv.getFloat32(4, true);
    this.dev[slot] = dv.getFloat32(8, true);
    this.history[slot] = dv.getUint32(12, true);
    this.missing[slot] = dv.getUint32(16, true);
    this.active[slot] = dv.getUint32(20, true);
    this.last[slot] = dv.getFloat64(24, true);
    const old = this.profileOf[slot]!;
    if (profile === null) this.profileOf[slot] = -1;
    else if (old >= 0) this.profiles[old] = profile;
    else this.profileOf[slot] = this.profiles.push(profile) - 1;
    return true;
  }

  /** Centre and sigma (transform space) for tMs: the seasonal slot when ready, else the EWMA band. */
  private resolve(slot: number, tMs: number): void {
    const id = this.profileOf[slot]!;
    if (id >= 0 && this.profiles[id]!.expectedAt(tMs, seasonalScratch) !== null) {
      this.centre = seasonalScratch.expected;
      this.sigma = seasonalScratch.spread;
      this.fromProfile = true;
      return;
    }
    this.centre = this.level[slot]!;
    this.sigma = this.rule.sigma(this.centre, this.dev[slot]!);
    this.fromProfile = false;
  }

  /** Accounts every window after the slot's last one and before tMs: silent (zero) or missing. */
  private catchUp(slot: number, tMs: number): void {
    const last = this.last[slot]!;
    if (Number.isNaN(last)) return;
    const w = this.windowMs;
    const first = last + w;
    const k = Math.round((tMs - first) / w);
    if (k <= 0) return;
    let done = 0;
    const gaps = this.gaps;
    for (let g = 0; g < gaps.length; g += 2) {
      const a = windowsBefore(gaps[g]!, first, w, k);
      const b = windowsBefore(gaps[g + 1]!, first, w, k);
      if (b <= done) continue;
      if (a > done) {
        this.zeros(slot, first + done * w, a - done);
        done = a;
      }
      this.addMissing(slot, b - done);
      done = b;
    }
    if (k > done) this.zeros(slot, first + done * w, k - done);
    this.last[slot] = first + (k - 1) * w;
  }

  private zeros(slot: number, fromMs: number, k: number): void {
    if (this.skipSilence) {
      const id = this.profileOf[slot]!;
      if (id >= 0) this.profiles[id]!.observeZeros(fromMs, k, this.windowMs);
      return;
    }
    this.rule.zeros(this.level[slot]!, this.dev[slot]!, this.history[slot]!, k, stepOut);
    this.level[slot] = stepOut[0]!;
    this.dev[slot] = stepOut[1]!;
    this.history[slot]! += k;
    const id = this.profileOf[slot]!;
    if (id >= 0) this.profiles[id]!.observeZeros(fromMs, k, this.windowMs);
  }

  private addMissing(slot: number, k: number): void {
    const missing = this.missing[slot]! + k;
    if (missing > this.maxMissingFraction * (this.history[slot]! + missing)) {
      this.level[slot] = 0;
      this.dev[slot] = 0;
      this.history[slot] = 0;
      this.missing[slot] = 0;
    } else {
      this.missing[slot] = missing;
    }
  }

  /** The slot's profile, allocating it once the slot has enough active windows. */
  private profileFor(slot: number): SeasonalProfile | null {
    const id = this.profileOf[slot]!;
    if (id >= 0) return this.profiles[id]!;
    if (this.seasonalConfig === null || this.active[slot]! < this.seasonalAfterActive) return null;
    const p = new SeasonalProfile(this.seasonalConfig);
    this.profileOf[slot] = this.profiles.push(p) - 1;
    return p;
  }

  private grow(capacity: number): void {
    const old = this.capacity;
    const resize = <T extends Float32Array | Float64Array | Uint32Array | Int32Array>(a: T, make: (n: number) => T): T => {
      const b = make(capacity);
      b.set(a);
      return b;
    };
    this.level = resize(this.level, (n) => new Float32Array(n));
    this.dev = resize(this.dev, (n) => new Float32Array(n));
    this.history = resize(this.history, (n) => new Uint32Array(n));
    this.missing = resize(this.missing, (n) => new Uint32Array(n));
    this.active = resize(this.active, (n) => new Uint32Array(n));
    this.last = resize(this.last, (n) => new Float64Array(n));
    this.last.fill(NaN, old);
    this.profileOf = resize(this.profileOf, (n) => new Int32Array(n));
    this.profileOf.fill(-1, old);
    this.capacity = capacity;
  }
}

/** How many of the k windows starting at first, w apart, start before t. */
function windowsBefore(t: number, first: number, w: number, k: number): number {
  return Math.min(k, Math.max(0, Math.ceil((t - first) / w)));
}

/**
 * One feature's baseline as an object: a view of one slot of a BaselineBank. Views of a shared bank
 * cost the view object only (about 40 heap octets, measured) on top of the slot's 32; `new FeatureBaseline(options)`
 * makes its own one-slot bank (about 2.3 KB measured on Node 20, for a few series or tests).
 */
export class FeatureBaseline {
  private readonly bank: BaselineBank;
  private readonly slot: number;

  constructor(source: BaselineOptions | BaselineBank, slot = 0) {
    this.bank = source instanceof BaselineBank ? source : new BaselineBank({ ...source, features: 1, initialCapacity: 1 });
    this.slot = source instanceof BaselineBank ? slot : 0;
  }

  /** Windows of history. */
  get n(): number {
    return this.bank.historyOf(this.slot);
  }

  get hasSeasonalProfile(): boolean {
    return this.bank.hasSeasonalProfile(this.slot);
  }

  observe(x: number, tMs: number, anomalous = false): boolean {
    return this.bank.observe(this.slot, x, tMs, anomalous);
  }

  /** Marks a gap for the whole bank (see BaselineBank.markMissing). */
  markMissing(fromMs: number, toMs: number): void {
    this.bank.markMissing(fromMs, toMs);
  }

  band(tMs: number, z: number, out?: Band): Band {
    return this.bank.band(this.slot, tMs, z, out);
  }

  score(x: number, tMs: number): number {
    return this.bank.score(this.slot, x, tMs);
  }

  toBytes(): Uint8Array {
    return this.bank.slotToBytes(this.slot);
  }

  /** Restores a baseline written by toBytes under the same options; null when the bytes do not fit. */
  static fromBytes(b: Uint8Array, options: BaselineOptions): FeatureBaseline | null {
    const f = new FeatureBaseline(options);
    return f.bank.slotFromBytes(0, b) ? f : null;
  }
}
