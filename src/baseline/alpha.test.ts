import { describe, expect, it } from 'vitest';
import { normalQuantile, zForAlpha } from './alpha.js';

describe('zForAlpha', () => {
  // Standard normal table values, from memory: 0.001 -> 3.0902, 0.01 -> 2.3263 (task brief).
  it('table quantiles (from memory of standard normal tables)', () => {
    expect(zForAlpha(0.001)).toBeCloseTo(3.0902, 4);
    expect(zForAlpha(0.01)).toBeCloseTo(2.3263, 4);
    expect(zForAlpha(0.05)).toBeCloseTo(1.6449, 4);
  });

  // Reference values from scipy 1.10 scipy.stats.norm.isf(alpha), Debian python3-scipy on this machine.
  it.each([
    [0.5, 0],
    [0.1, 1.2815515655446004],
    [0.01, 2.3263478740408408],
    [0.001, 3.090232306167813],
    [1e-4, 3.7190164854556804],
    [1e-6, 4.753424308822899],
    [1e-9, 5.9978070150076865],
    [0.975, -1.959963984540054],
    [0.99, -2.3263478740408408],
  ])('alpha %s -> scipy norm.isf', (alpha, want) => {
    expect(Math.abs(zForAlpha(alpha) - want)).toBeLessThan(1e-8 * Math.max(1, Math.abs(want)));
  });

  it('edges', () => {
    expect(normalQuantile(0)).toBe(-Infinity);
    expect(normalQuantile(1)).toBe(Infinity);
    expect(normalQuantile(1.5)).toBeNaN();
    expect(normalQuantile(Number.NaN)).toBeNaN();
  });

  it('is monotone in alpha (a smaller budget gives a higher threshold)', () => {
    let prev = -Infinity;
    for (let a = 0.9; a > 1e-8; a /= 1.7) {
      const z = zForAlpha(a);
      expect(z).toBeGreaterThan(prev);
      prev = z;
    }
  });
});
