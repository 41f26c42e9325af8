import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { TopK } from './topk.js';

/** Exact frequencies, the reference the Space-Saving bounds are stated against. */
function exact(stream: [number, number][]): Map<number, number> {
  const f = new Map<number, number>();
  for (const [k, n] of stream) f.set(k, (f.get(k) ?? 0) + n);
  return f;
}

describe('TopK (Space-Saving)', () => {
  it('is exact while the keys fit', () => {
    const t = new TopK(4);
    for (const [k, n] of [[10, 5], [20, 1], [10, 2], [30, 3]] as const) t.add(k, n);
    expect(t.top(2)).toEqual([
      { key: 10, count: 7, error: 0 },
      { key: 30, count: 3, error: 0 },
    ]);
    expect(t.total).toBe(11);
  });

  // Metwally et al. 2005, eviction rule: the new key takes c_min + n with error c_min.
  it('evicts the minimum and inherits its count as error', () => {
    const t = new TopK(2);
    t.add(1, 5);
    t.add(2, 1);
    t.add(3, 1);
    expect(t.top(2)).toEqual([
      { key: 1, count: 5, error: 0 },
      { key: 3, count: 2, error: 1 },
    ]);
  });

  // Guarantees from Metwally et al. 2005 (METHODS.md 4.5, exact statements from memory): every key with
  // frequency > N/m is monitored; count - error <= true <= count; c_min <= N/m.
  it('keeps the Space-Saving guarantees on random weighted streams', () => {
    const skewedKey = fc.oneof(
      { arbitrary: fc.integer({ min: 0, max: 3 }), weight: 3 },
      { arbitrary: fc.integer({ min: 0, max: 5000 }), weight: 2 },
    );
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 16 }),
        fc.array(fc.tuple(skewedKey, fc.integer({ min: 1, max: 5 })), { maxLength: 2000 }),
        (m, stream) => {
          const t = new TopK(m);
          for (const [k, n] of stream) t.add(k, n);
          const truth = exact(stream);
          const n = stream.reduce((s, [, w]) => s + w, 0);
          const entries = t.top(m);
          const monitored = new Map(entries.map((e) => [e.key, e]));
          for (const [k, f] of truth) if (f > n / m) expect(monitored.has(k)).toBe(true);
          for (const e of entries) {
            const f = truth.get(e.key) ?? 0;
            expect(e.count - e.error).toBeLessThanOrEqual(f);
            expect(f).toBeLessThanOrEqual(e.count);
          }
          if (entries.length === m) expect(Math.min(...entries.map((e) => e.count))).toBeLessThanOrEqual(n / m);
          expect(entries.reduce((s, e) => s + e.count, 0)).toBe(n); // counts always sum to N
        },
      ),
      { numRuns: 300 },
    );
  });

  it('reset empties and is reusable', () => {
    const t = new TopK(3);
    for (let i = 0; i < 100; i++) t.add(i % 7);
    t.reset();
    expect(t.top(3)).toEqual([]);
    t.add(9, 2);
    expect(t.top(1)).toEqual([{ key: 9, count: 2, error: 0 }]);
  });
});
