import { describe, expect, it } from 'vitest';
import { IdleClock } from './clock.js';

// The idleness rule is ours (issue 6, no outside source): event time is the data's; after
// `idleAfterMs` of wall time without data it moves on by the wall time elapsed since the last data.
describe('IdleClock', () => {
  it('does not move while data flows, nor before any data', () => {
    const c = new IdleClock(2000);
    expect(c.tick(1_000)).toBeNaN();
    c.note(50_000);
    expect(c.tick(2_000)).toBeNaN();
    c.note(51_000);
    expect(c.tick(3_000)).toBeNaN();
    expect(c.eventMs).toBe(51_000);
  });

  it('after the idle threshold, advances from the last event time by the wall time elapsed', () => {
    const c = new IdleClock(2000);
    c.note(50_000);
    expect(c.tick(10_000)).toBeNaN(); // data seen in this tick: wall time of the last data = 10 000
    expect(c.tick(11_000)).toBeNaN(); // 1 s idle: under the threshold
    expect(c.tick(12_000)).toBe(52_000);
    expect(c.tick(13_000)).toBe(53_000);
    expect(c.eventMs).toBe(53_000);
  });

  it('new data resets the idle span; event time never goes back', () => {
    const c = new IdleClock(1000);
    c.note(50_000);
    c.tick(0);
    expect(c.tick(5_000)).toBe(55_000);
    c.note(51_000); // older than where idleness took the clock (a late record)
    expect(c.tick(6_000)).toBeNaN();
    expect(c.eventMs).toBe(55_000);
    expect(c.tick(7_000)).toBeNaN(); // 51 000 + 1 000 is behind 55 000: nothing to do
    expect(c.tick(11_000)).toBe(56_000);
  });

  it('records pushed out by its own advance do not count as new data', () => {
    const c = new IdleClock(1000);
    c.note(50_000);
    c.tick(0);
    expect(c.tick(2_000)).toBe(52_000);
    c.note(49_000); // a flow update the flow table cut because of that advance
    c.discardNotes();
    expect(c.tick(3_000)).toBe(53_000);
  });
});
