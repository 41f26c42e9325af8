import { describe, expect, it } from 'vitest';
import { Cusum } from './cusum.js';

describe('Cusum', () => {
  // METHODS.md 7.2 / row 36 [C]: constant +1 sigma, k = 0.5, h = 5: C+ = 5.0 at step 10, alarm at step 11.
  it('+1 sigma shift: C+ = 5.0 at step 10, first alarm at step 11 [METHODS row 36]', () => {
    const c = new Cusum(0.5, 5);
    let firstAlarm = 0;
    for (let step = 1; step <= 12; step++) {
      const s = c.update(1);
      if (step === 10) {
        expect(s.upper).toBeCloseTo(5.0, 12);
        expect(s.alarm).toBe(false);
      }
      if (s.alarm && firstAlarm === 0) firstAlarm = step;
    }
    expect(firstAlarm).toBe(11);
  });
  it('lower side mirrors the upper side', () => {
    const c = new Cusum();
    for (let i = 0; i < 11; i++) c.update(-1);
    expect(c.lower).toBeCloseTo(5.5, 12);
    expect(c.upper).toBe(0);
  });
  it('in-control noise inside +-k never accumulates; reset clears', () => {
    const c = new Cusum();
    for (let i = 0; i < 100; i++) expect(c.update(i % 2 ? 0.4 : -0.4).alarm).toBe(false);
    expect(c.upper).toBe(0);
    for (let i = 0; i < 20; i++) c.update(2);
    c.reset();
    expect(c.upper).toBe(0);
    expect(c.update(0).alarm).toBe(false);
  });
});
