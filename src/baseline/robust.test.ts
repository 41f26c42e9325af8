import { describe, expect, it } from 'vitest';
import { mad, median, robustZ } from './robust.js';

describe('robust statistics', () => {
  it('median of odd, even and unsorted input', () => {
    expect(median([3, 1, 2])).toBe(2);
    expect(median([4, 1, 3, 2])).toBe(2.5);
    expect(median([])).toBeNaN();
    expect(median([10, 2, 33, 4, 5])).toBe(5); // numeric, not lexicographic, order
  });
  // R documentation of stats::mad: constant 1.4826; mad(1:9) = 2 * 1.4826 = 2.9652 (METHODS.md 7.3, row 37).
  it('mad(1:9) = 2.9652 [R stats::mad docs]', () => {
    expect(mad([1, 2, 3, 4, 5, 6, 7, 8, 9])).toBeCloseTo(2.9652, 10);
  });
  // METHODS.md 7.3 / row 37 [C]: [1,2,3,4,100]: median 3, MAD 1, sigma 1.4826, z(100) = 65.43.
  it('robust z of 100 in [1,2,3,4,100] = 65.43 [METHODS row 37]', () => {
    const xs = [1, 2, 3, 4, 100];
    expect(median(xs)).toBe(3);
    expect(mad(xs, 1)).toBe(1);
    expect(robustZ(100, xs)).toBeCloseTo(65.43, 2);
  });
  it('constant history falls back to the floor', () => {
    expect(robustZ(7, [5, 5, 5], 1)).toBe(2);
    expect(robustZ(5, [5, 5, 5])).toBe(0);
    expect(robustZ(6, [5, 5, 5])).toBe(Infinity);
  });
});
