import { describe, expect, it } from 'vitest';
import { linearScale, logScale, niceStep, timeTicks, wantsLog } from '../../src/report/svg/scale.js';

describe('chart scales', () => {
  it('steps are 1, 2 or 5 times a power of ten', () => {
    // common practice, no source: the 1-2-5 sequence of axis steps
    expect([0.3, 1, 1.5, 3, 7, 12, 450].map(niceStep)).toEqual([0.5, 1, 2, 5, 10, 20, 500]);
  });

  it('a linear scale widens to round ticks and maps its ends onto the pixel range', () => {
    const s = linearScale(0, 37, 200, 0, 4);
    expect(s.ticks()).toEqual([0, 10, 20, 30, 40]);
    expect(s.map(0)).toBe(200);
    expect(s.map(40)).toBe(0);
  });

  it('the log scale puts 0 on the axis and decades evenly', () => {
    const s = logScale(3_000_000, 100, 0);
    expect(s.map(0)).toBe(100);
    const d1 = s.map(99) - s.map(9), d2 = s.map(9999) - s.map(999);
    expect(Math.abs(d1 - d2)).toBeLessThan(1e-9); // log10(1 + v): 9 -> 1, 99 -> 2, 999 -> 3, 9999 -> 4
    expect(s.ticks()[0]).toBe(0);
    expect(s.ticks()).not.toContain(1); // too close to 0 on a 7-decade axis
    expect(s.ticks().slice(1).every((t) => Math.log10(t) % 1 === 0)).toBe(true);
  });

  it('counts spanning more than a factor of 100 want a log axis', () => {
    expect(wantsLog([0, 3, 5, 4, 2])).toBe(false);
    expect(wantsLog([0, 3, 5, 4000, 2])).toBe(true);
    expect(wantsLog([0, 0, 0])).toBe(false);
  });

  it('time ticks fall on round UTC minutes and hours and read HH:MM in UTC', () => {
    const t0 = Date.UTC(2026, 2, 10, 9, 0, 2), t1 = Date.UTC(2026, 2, 10, 15, 0, 0);
    const ticks = timeTicks(t0, t1, 8);
    expect(ticks.map((t) => t.label)).toEqual(['10:00', '11:00', '12:00', '13:00', '14:00', '15:00']);
    expect(ticks.every((t) => t.t % 3_600_000 === 0)).toBe(true);
    const short = timeTicks(Date.UTC(2026, 2, 10, 9, 14, 30), Date.UTC(2026, 2, 10, 9, 30), 8);
    expect(short[0]!.label).toBe('09:16');
  });

  it('a tick at UTC midnight reads the date', () => {
    const ticks = timeTicks(Date.UTC(2026, 2, 9, 20), Date.UTC(2026, 2, 10, 4), 8);
    expect(ticks.map((t) => t.label)).toContain('03-10');
  });
});
