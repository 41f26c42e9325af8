import { describe, expect, it } from 'vitest';
import { zForAlpha } from './alpha.js';
import { BaselineBank, FeatureBaseline, type BaselineOptions } from './model.js';

// Behaviour rules from DESIGN.md 6 and METHODS.md 7.7 (common practice, no outside source).
const MIN = 60_000;
const HOUR = 60 * MIN;
const DAY = 24 * HOUR;
const T0 = Date.UTC(2026, 0, 5);
const counts: BaselineOptions = { windowMs: MIN, transform: 'log1p' };

/** Small deterministic wobble so deviations are not all zero (common practice, no source). */
const wobble = (i: number) => ((i * 2654435761) >>> 0) % 5;

describe('FeatureBaseline trust rules', () => {
  it('is ready after 12 windows of history (DESIGN.md 6)', () => {
    const f = new FeatureBaseline(counts);
    for (let i = 0; i < 12; i++) {
      expect(f.band(T0 + i * MIN, 3).ready).toBe(false);
      f.observe(20 + wobble(i), T0 + i * MIN);
    }
    expect(f.band(T0 + 12 * MIN, 3).ready).toBe(true);
    expect(f.n).toBe(12);
  });

  it('an unknown baseline has a floor band and is not ready', () => {
    const b = new FeatureBaseline(counts).band(T0, 3);
    expect(b).toEqual({ expected: 0, low: 0, high: 0, spread: Math.LN2, ready: false, seasonal: false });
  });

  it('ignores a window that is not after the last one', () => {
    const f = new FeatureBaseline(counts);
    expect(f.observe(5, T0 + MIN)).toBe(true);
    expect(f.observe(5, T0 + MIN)).toBe(false);
    expect(f.observe(5, T0)).toBe(false);
    expect(f.observe(Number.NaN, T0 + 2 * MIN)).toBe(false);
    expect(f.n).toBe(1);
  });

  it('silent windows are applied lazily as zeros', () => {
    const lazy = new FeatureBaseline({ ...counts, seasonal: false });
    const eager = new FeatureBaseline({ ...counts, seasonal: false });
    for (let i = 0; i < 30; i++) {
      lazy.observe(40 + wobble(i), T0 + i * MIN);
      eager.observe(40 + wobble(i), T0 + i * MIN);
    }
    for (let i = 30; i < 130; i++) eager.observe(0, T0 + i * MIN);
    lazy.observe(7, T0 + 130 * MIN);
    eager.observe(7, T0 + 130 * MIN);
    expect(lazy.n).toBe(131);
    const a = lazy.band(T0 + 131 * MIN, 3);
    const b = eager.band(T0 + 131 * MIN, 3);
    expect(a.expected).toBeCloseTo(b.expected, 4);
    expect(a.spread).toBeCloseTo(b.spread, 5);
  });

  it('tolerates up to 10 % missing windows, restarts warm-up past that (DESIGN.md 6)', () => {
    const run = (gapWindows: number) => {
      const f = new FeatureBaseline(counts);
      for (let i = 0; i < 100; i++) f.observe(30 + wobble(i), T0 + i * MIN);
      f.markMissing(T0 + 100 * MIN, T0 + (100 + gapWindows) * MIN);
      f.observe(30, T0 + (100 + gapWindows) * MIN);
      return f;
    };
    const tolerated = run(10); // 10 / 110 < 10 %
    expect(tolerated.n).toBe(101);
    expect(tolerated.band(T0 + 111 * MIN, 3).ready).toBe(true);
    const restarted = run(12); // 12 / 112 > 10 %
    expect(restarted.n).toBe(1);
    expect(restarted.band(T0 + 113 * MIN, 3).ready).toBe(false);
  });

  it('an anomalous window is learned as the band edge at z = 3, whatever alpha the detector uses', () => {
    const make = () => {
      const f = new FeatureBaseline(counts);
      for (let i = 0; i < 50; i++) f.observe(100 + 3 * wobble(i), T0 + i * MIN);
      return f;
    };
    const attacked = make();
    const edge = make();
    const t = T0 + 50 * MIN;
    const high3 = edge.band(t, 3).high;
    attacked.band(t, zForAlpha(1e-6)); // the detector's own z does not matter
    attacked.observe(1e7, t, true);
    edge.observe(high3, t);
    expect(attacked.toBytes()).toEqual(edge.toBytes());
    expect(attacked.band(t + MIN, 3).expected).toBeLessThan(130);
  });

  it('score is consistent with the band edges', () => {
    const f = new FeatureBaseline(counts);
    for (let i = 0; i < 40; i++) f.observe(50 + wobble(i), T0 + i * MIN);
    const t = T0 + 40 * MIN;
    const z = zForAlpha(0.001);
    const band = f.band(t, z);
    expect(f.score(band.high * 1.01, t)).toBeGreaterThan(z);
    expect(f.score(band.high * 0.99, t)).toBeLessThan(z);
    expect(f.score(band.expected, t)).toBeCloseTo(0, 5);
  });
});

describe('FeatureBaseline with a seasonal profile', () => {
  // DESIGN.md 6: a recurring scheduled burst (nightly backup at 02:00) learned over 4+ cycles raises
  // nothing; the same burst at an unusual hour does.
  it('learns the 02:00 burst; the same burst at 14:00 scores high', () => {
    const f = new FeatureBaseline(counts);
    const value = (t: number, i: number) => (new Date(t).getUTCHours() === 2 ? 5000 : 10) + wobble(i);
    const days = 5;
    for (let i = 0; i < days * 1440; i++) {
      const t = T0 + i * MIN;
      f.observe(value(t, i), t);
    }
    expect(f.hasSeasonalProfile).toBe(true);
    const z = zForAlpha(0.001);
    const at2 = T0 + days * DAY + 2 * HOUR + 30 * MIN;
    const night = f.band(at2, z);
    expect(night.seasonal).toBe(true);
    expect(f.score(5002, at2)).toBeLessThan(z);
    const at14 = T0 + days * DAY + 14 * HOUR;
    expect(f.band(at14, z).seasonal).toBe(true);
    expect(f.score(5002, at14)).toBeGreaterThan(z);
  });

  it('before 4 cycles the EWMA band serves', () => {
    const f = new FeatureBaseline(counts);
    for (let i = 0; i < 2 * 1440; i++) f.observe(10 + wobble(i), T0 + i * MIN);
    const b = f.band(T0 + 2 * DAY, 3);
    expect(b.ready).toBe(true);
    expect(b.seasonal).toBe(false);
  });

  it('round-trips through bytes, with and without a profile', () => {
    for (const windows of [5, 3000]) {
      const f = new FeatureBaseline(counts);
      for (let i = 0; i < windows; i++) f.observe(10 + wobble(i), T0 + i * MIN);
      const g = FeatureBaseline.fromBytes(f.toBytes(), counts)!;
      expect(g.toBytes()).toEqual(f.toBytes());
      const t = T0 + windows * MIN;
      expect(g.band(t, 3)).toEqual(f.band(t, 3));
    }
    expect(FeatureBaseline.fromBytes(new Uint8Array(3), counts)).toBeNull();
    const withProfile = new FeatureBaseline(counts);
    for (let i = 0; i < 100; i++) withProfile.observe(1 + wobble(i), T0 + i * MIN);
    expect(FeatureBaseline.fromBytes(withProfile.toBytes(), { ...counts, seasonal: false })).toBeNull();
  });
});

describe('BaselineBank', () => {
  it('32 octets per host-feature without a seasonal profile', () => {
    const bank = new BaselineBank({ ...counts, features: 4, initialCapacity: 4096 });
    expect(bank.memoryBytes()).toBe(4096 * 32);
    for (let host = 0; host < 1024; host++) for (let f = 0; f < 4; f++) bank.observe(bank.slotOf(host, f), host + f, T0);
    expect(bank.memoryBytes()).toBe(4096 * 32);
    expect(bank.seasonalProfiles).toBe(0);
  });

  it('grows as slots are used and keeps slots independent', () => {
    const bank = new BaselineBank({ ...counts, initialCapacity: 2 });
    bank.observe(0, 100, T0);
    bank.observe(9, 5, T0);
    expect(bank.band(0, T0 + MIN, 3).expected).toBeCloseTo(100, 3);
    expect(bank.band(9, T0 + MIN, 3).expected).toBeCloseTo(5, 4);
    expect(bank.historyOf(3)).toBe(0);
    expect(bank.historyOf(1000)).toBe(0);
  });

  it('a slot restored from bytes behaves like the original', () => {
    const a = new BaselineBank(counts);
    const b = new BaselineBank(counts);
    for (let i = 0; i < 200; i++) a.observe(7, 20 + wobble(i), T0 + i * MIN);
    expect(b.slotFromBytes(3, a.slotToBytes(7))).toBe(true);
    a.observe(7, 25, T0 + 300 * MIN);
    b.observe(3, 25, T0 + 300 * MIN);
    expect(b.slotToBytes(3)).toEqual(a.slotToBytes(7));
  });
});

describe('FeatureBaseline views of a bank', () => {
  it('a view reads and writes its bank slot', () => {
    const bank = new BaselineBank({ ...counts, features: 3 });
    const view = new FeatureBaseline(bank, bank.slotOf(2, 1));
    for (let i = 0; i < 20; i++) view.observe(40, T0 + i * MIN);
    expect(bank.historyOf(bank.slotOf(2, 1))).toBe(20);
    expect(bank.historyOf(bank.slotOf(2, 0))).toBe(0);
    expect(view.band(T0 + 20 * MIN, 3)).toEqual(bank.band(bank.slotOf(2, 1), T0 + 20 * MIN, 3));
    expect(view.hasSeasonalProfile).toBe(false);
  });
});
