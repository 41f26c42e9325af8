import { describe, expect, it } from 'vitest';
import { SeasonalConfig, SeasonalProfile } from './seasonal.js';

// Behaviour of our seasonal profile design (no outside source); dates from the proleptic Gregorian
// calendar as Date.UTC computes it (2026-01-05 is a Monday).
const MIN = 60_000;
const HOUR = 3_600_000;
const DAY = 24 * HOUR;
const MONDAY = Date.UTC(2026, 0, 5);

function feedDays(p: SeasonalProfile, days: number, valueAt: (t: number) => number, windowMs = MIN, from = MONDAY) {
  for (let t = from; t < from + days * DAY; t += windowMs) p.observe(valueAt(t), t);
}
const nightlyBurst = (t: number) => (new Date(t).getUTCHours() === 2 ? 100 : 10);

describe('SeasonalProfile daily slots', () => {
  it('serves only after 4 full cycles, then learns the hour-of-day shape', () => {
    const p = new SeasonalProfile();
    feedDays(p, 3, nightlyBurst);
    expect(p.expectedAt(MONDAY + 3 * DAY + 2.5 * HOUR)).toBeNull();
    feedDays(p, 1, nightlyBurst, MIN, MONDAY + 3 * DAY);
    const burst = p.expectedAt(MONDAY + 4 * DAY + 2.5 * HOUR)!;
    expect(burst.cycles).toBe(4);
    expect(burst.weekly).toBe(false);
    expect(burst.expected).toBeCloseTo(100, 4);
    expect(p.expectedAt(MONDAY + 4 * DAY + 10 * HOUR)!.expected).toBeCloseTo(10, 4);
  });

  it('spread combines within-hour and cycle-to-cycle variation', () => {
    const p = new SeasonalProfile();
    // Hour 5: alternate 8 / 12 inside the hour (within sd 2); the day's mean for that hour is stable.
    feedDays(p, 5, (t) => (new Date(t).getUTCHours() === 5 ? (Math.floor(t / MIN) % 2 ? 12 : 8) : 0));
    const e = p.expectedAt(MONDAY + 5 * DAY + 5 * HOUR)!;
    expect(e.expected).toBeCloseTo(10, 4);
    expect(e.spread).toBeCloseTo(2, 3);
  });

  it('fixed offset: local 02:00 on a UTC+2 site is 00:00 UTC', () => {
    const p = new SeasonalProfile({ offsetMinutes: 120 });
    feedDays(p, 5, (t) => (new Date(t).getUTCHours() === 0 ? 100 : 10));
    expect(p.expectedAt(MONDAY + 5 * DAY + 0.5 * HOUR)!.expected).toBeCloseTo(100, 4);
    expect(p.expectedAt(MONDAY + 5 * DAY + 2.5 * HOUR)!.expected).toBeCloseTo(10, 4);
  });

  it('clips a one-off burst in a ready slot', () => {
    const config = new SeasonalConfig({ spreadFloor: () => 1 });
    const p = new SeasonalProfile(config);
    feedDays(p, 5, () => 10);
    const before = p.expectedAt(MONDAY + 5 * DAY + 10 * HOUR)!;
    feedDays(p, 1, (t) => (new Date(t).getUTCHours() === 10 ? 1000 : 10), MIN, MONDAY + 5 * DAY);
    const after = p.expectedAt(MONDAY + 6 * DAY + 10 * HOUR)!;
    expect(after.expected - before.expected).toBeLessThanOrEqual(config.lambda * config.clip * before.spread + 1e-4);
  });
});

describe('SeasonalProfile weekly slots', () => {
  it('the hour-of-week slot takes over after 4 weeks (slot 0 = Monday 00:00)', () => {
    const p = new SeasonalProfile();
    const weekend = (t: number) => ([0, 6].includes(new Date(t).getUTCDay()) ? 1 : 50);
    feedDays(p, 26, weekend, HOUR);
    // After 26 days (three Saturdays) the daily slots are ready (mixing weekdays and weekends), the weekly ones not yet.
    const saturdayEarly = p.expectedAt(MONDAY + 33 * DAY + 9 * HOUR)!;
    expect(saturdayEarly.weekly).toBe(false);
    feedDays(p, 2, weekend, HOUR, MONDAY + 26 * DAY);
    const saturday = p.expectedAt(MONDAY + 33 * DAY + 9 * HOUR)!;
    expect(saturday.weekly).toBe(true);
    expect(saturday.expected).toBeCloseTo(1, 4);
    const monday = p.expectedAt(MONDAY + 35 * DAY)!;
    expect(monday.weekly).toBe(true);
    expect(monday.expected).toBeCloseTo(50, 4);
  });
});

describe('SeasonalProfile lazy zeros and bytes', () => {
  it('observeZeros equals single zero observations, across hours and odd window sizes', () => {
    const windowMs = 7 * MIN;
    const lazy = new SeasonalProfile();
    const eager = new SeasonalProfile();
    let t = MONDAY;
    for (let round = 0; round < 40; round++) {
      lazy.observe(round, t);
      eager.observe(round, t);
      t += windowMs;
      const k = (round * 37) % 300;
      lazy.observeZeros(t, k, windowMs);
      for (let i = 0; i < k; i++) eager.observe(0, t + i * windowMs);
      t += k * windowMs;
    }
    expect(lazy.toBytes()).toEqual(eager.toBytes());
  });

  it('round-trips through bytes', () => {
    const p = new SeasonalProfile();
    feedDays(p, 6, nightlyBurst);
    const q = SeasonalProfile.fromBytes(p.toBytes(), p.config)!;
    expect(q.toBytes()).toEqual(p.toBytes());
    expect(q.expectedAt(MONDAY + 6 * DAY + 2 * HOUR)).toEqual(p.expectedAt(MONDAY + 6 * DAY + 2 * HOUR));
    expect(SeasonalProfile.fromBytes(p.toBytes().subarray(1), p.config)).toBeNull();
  });
});
