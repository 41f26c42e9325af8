import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { IntSet } from './int-set.js';

describe('IntSet', () => {
  it('holds what a JS Set holds, across growth, clears and keys up to 2^53 (property against Set; common practice, no source)', () => {
    fc.assert(fc.property(
      fc.array(fc.oneof(fc.integer({ min: 0, max: 300 }), fc.maxSafeInteger().filter((n) => n >= 0)), { maxLength: 400 }),
      fc.integer({ min: 0, max: 400 }),
      (keys, clearAt) => {
        const s = new IntSet();
        let ref = new Set<number>();
        keys.forEach((k, i) => {
          if (i === clearAt) { s.clear(); ref = new Set(); }
          expect(s.add(k)).toBe(!ref.has(k));
          ref.add(k);
        });
        expect(s.size).toBe(ref.size);
        const seen: number[] = [];
        s.forEach((k) => seen.push(k));
        expect(seen).toEqual([...ref]);
        for (const k of keys) expect(s.has(k)).toBe(ref.has(k));
        expect(s.has(2 ** 53 - 2) && !ref.has(2 ** 53 - 2)).toBe(false);
      },
    ), { numRuns: 200 });
  });

  it('trim empties and gives back a table grown past the bound', () => {
    const s = new IntSet();
    const small = s.memoryBytes();
    for (let k = 0; k < 1000; k++) s.add(k * 65536 + 443);
    expect(s.memoryBytes()).toBeGreaterThan(small);
    s.trim(256);
    expect(s.size).toBe(0);
    expect(s.memoryBytes()).toBe(small);
    expect(s.add(7)).toBe(true);
    expect(s.has(443)).toBe(false);
  });
});
