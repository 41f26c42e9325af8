import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { EntropyCounter } from './entropy.js';

function counterOf(counts: number[]): EntropyCounter {
  const e = new EntropyCounter();
  counts.forEach((n, key) => e.add(key * 7919, n));
  return e;
}
/** Direct definition H = -sum p log2 p (Shannon 1948), the reference for the streaming form. */
function direct(counts: number[]): number {
  const s = counts.reduce((a, b) => a + b, 0);
  return -counts.reduce((h, n) => h + (n / s) * Math.log2(n / s), 0);
}

describe('EntropyCounter check values', () => {
  // METHODS.md row 31 [C]: [4,2,1,1] -> 1.75 bits, normalised 0.875.
  it('[4,2,1,1] -> 1.75 bits, 0.875', () => {
    const e = counterOf([4, 2, 1, 1]);
    expect(e.entropy()).toBeCloseTo(1.75, 10);
    expect(e.normalised()).toBeCloseTo(0.875, 10);
    expect(e.distinct).toBe(4);
    expect(e.total).toBe(8);
  });
  // METHODS.md row 32 [C]: [3,1] -> 0.811278; [9,1] -> 0.468996; uniform over 8 -> 3 bits.
  it('[3,1], [9,1], uniform over 8', () => {
    expect(counterOf([3, 1]).entropy()).toBeCloseTo(0.811278, 6);
    expect(counterOf([9, 1]).entropy()).toBeCloseTo(0.468996, 6);
    const u = counterOf([1, 1, 1, 1, 1, 1, 1, 1]);
    expect(u.entropy()).toBeCloseTo(3, 10);
    expect(u.normalised()).toBeCloseTo(1, 10);
  });
  // METHODS.md 5 worked examples [C]: [5,3,2] -> 1.485475 bits; [1,1] -> 1 bit; a single value -> 0.
  it('[5,3,2], [1,1], single value, empty', () => {
    expect(counterOf([5, 3, 2]).entropy()).toBeCloseTo(1.485475, 6);
    expect(counterOf([1, 1]).entropy()).toBeCloseTo(1, 10);
    const one = counterOf([42]);
    expect(one.entropy()).toBe(0);
    expect(one.normalised()).toBe(0); // N0 <= 1 convention, METHODS.md 5 [P]
    expect(new EntropyCounter().entropy()).toBe(0);
  });
  it('unit adds accumulate like weighted adds', () => {
    const e = new EntropyCounter();
    for (const [k, n] of [[1, 5], [2, 3], [3, 2]] as const) for (let i = 0; i < n; i++) e.add(k);
    expect(e.entropy()).toBeCloseTo(1.485475, 6);
    expect(e.countOf(1)).toBe(5);
  });
});

describe('EntropyCounter streaming form', () => {
  // Streaming identity H = log2 S - (1/S) sum n log2 n (METHODS.md 5, algebra) against the direct definition.
  it('matches the direct definition on random histograms, across table growth', () => {
    fc.assert(
      fc.property(fc.array(fc.integer({ min: 1, max: 1000 }), { minLength: 1, maxLength: 600 }), (counts) => {
        const e = counterOf(counts);
        expect(e.entropy()).toBeCloseTo(direct(counts), 8);
        expect(e.distinct).toBe(counts.length);
        expect(e.saturated).toBe(false);
      }),
      { numRuns: 200 },
    );
  });
  it('reset clears and the table is reused', () => {
    const e = counterOf(Array.from({ length: 500 }, () => 2));
    const bytes = e.memoryBytes();
    e.reset();
    expect(e.entropy()).toBe(0);
    expect(e.distinct).toBe(0);
    expect(e.countOf(7919)).toBe(0);
    const again = counterOf([4, 2, 1, 1]);
    [4, 2, 1, 1].forEach((n, k) => e.add(k * 7919, n));
    expect(e.entropy()).toBeCloseTo(again.entropy(), 12);
    expect(e.memoryBytes()).toBe(bytes);
  });
  it('trim empties and gives back a table grown past the bound, keeps a small one', () => {
    const e = counterOf(Array.from({ length: 500 }, () => 1));
    const small = new EntropyCounter().memoryBytes();
    e.trim(256);
    expect(e.distinct).toBe(0);
    expect(e.memoryBytes()).toBe(small);
    const again = counterOf([4, 2, 1, 1]);
    [4, 2, 1, 1].forEach((n, k) => e.add(k * 7919, n));
    expect(e.entropy()).toBeCloseTo(again.entropy(), 12);
    const kept = counterOf([1, 2, 3]);
    const bytes = kept.memoryBytes();
    kept.trim(256);
    expect(kept.memoryBytes()).toBe(bytes);
  });
  it('ignores non-positive weights', () => {
    const e = counterOf([3, 1]);
    e.add(99, 0);
    e.add(99, -2);
    expect(e.distinct).toBe(2);
  });
});

describe('EntropyCounter bound', () => {
  // Our documented overflow rule (no source): keys past maxDistinct count as new singleton keys.
  it('saturates past maxDistinct and treats overflow keys as new keys', () => {
    const e = new EntropyCounter(8);
    for (let k = 0; k < 8; k++) e.add(k);
    expect(e.saturated).toBe(false);
    for (let k = 8; k < 16; k++) e.add(k);
    expect(e.saturated).toBe(true);
    expect(e.distinct).toBe(16);
    expect(e.entropy()).toBeCloseTo(4, 10); // same as 16 distinct singletons
    e.add(3, 2); // stored keys keep exact counts
    expect(e.countOf(3)).toBe(3);
    expect(e.memoryBytes()).toBeLessThanOrEqual(16 * 12 + 8 * 4);
  });
});
