import { describe, expect, it } from 'vitest';
import { HyperLogLog, sparseLimit, standardError } from './hll.js';

/** Classic HLL constant alpha_m (Flajolet et al. 2007), reference formula for METHODS row 23 only. */
function classicAlpha(m: number): number {
  if (m === 16) return 0.673;
  if (m === 32) return 0.697;
  if (m === 64) return 0.709;
  return 0.7213 / (1 + 1.079 / m);
}
/** Linear counting m ln(m / V) (Whang et al. 1990), reference formula for METHODS row 25. */
const linearCounting = (m: number, zeros: number) => m * Math.log(m / zeros);

function sketchOf(keys: Iterable<number>, p = 12): HyperLogLog {
  const h = new HyperLogLog(p);
  for (const k of keys) h.add(k);
  return h;
}
function* range(from: number, to: number): Generator<number> {
  for (let i = from; i < to; i++) yield i;
}
/** Dense sketch with given register values, built through the byte format. */
function denseWith(p: number, regs: number[]): HyperLogLog {
  const b = new Uint8Array(3 + (1 << p));
  b.set([1, p, 1]);
  b.set(regs, 3);
  return HyperLogLog.fromBytes(b)!;
}

describe('reference constants (METHODS.md rows 23-25)', () => {
  it('classic alpha_m values [Flajolet et al. 2007; METHODS row 23]', () => {
    expect(classicAlpha(16)).toBe(0.673);
    expect(classicAlpha(32)).toBe(0.697);
    expect(classicAlpha(64)).toBe(0.709);
    expect(classicAlpha(1024)).toBeCloseTo(0.720541, 6);
  });
  it('standard error 1.04/sqrt(m) at p = 12 and 14 [METHODS row 24]', () => {
    expect(standardError(12)).toBeCloseTo(0.01625, 8);
    expect(standardError(14)).toBeCloseTo(0.008125, 8);
  });
  it('linear counting m = 16, V = 15 [METHODS row 25]', () => {
    expect(linearCounting(16, 15)).toBeCloseTo(1.032616, 6);
  });
  // Ertl's estimator should agree with linear counting where linear counting is accurate (few registers
  // set): Ertl 2017 shows sigma() reduces to it in the small range.
  it('Ertl estimate tracks linear counting at low load', () => {
    const h = sketchOf(range(0, 300), 12);
    expect(h.exact).toBe(false);
    const regs = h.toBytes().subarray(3);
    const zeros = regs.filter((r) => r === 0).length;
    expect(h.count() / linearCounting(4096, zeros)).toBeCloseTo(1, 2);
  });
});

describe('accuracy (acceptance)', () => {
  // Acceptance per task: relative error within 3 standard errors (1.04/sqrt(m), Flajolet et al. 2007)
  // at 10, 1 000, 2.5 m, 100 000 and 1 000 000 distinct keys, over 20 seeds, p = 12.
  it('each of 20 seeds within 3 standard errors at 10, 1e3, 2.5m, 1e5, 1e6', () => {
    const p = 12;
    const m = 1 << p;
    const tolerance = 3 * standardError(p);
    const checkpoints = [10, 1000, 2.5 * m, 100_000, 1_000_000];
    const worst = new Map<number, number>();
    let sumSq = 0;
    for (let seed = 0; seed < 20; seed++) {
      const h = new HyperLogLog(p);
      const base = seed * 2 ** 33; // disjoint key ranges per seed
      let added = 0;
      for (const n of checkpoints) {
        for (; added < n; added++) h.add(base + added);
        const rel = Math.abs(h.count() - n) / n;
        worst.set(n, Math.max(worst.get(n) ?? 0, rel));
        sumSq += rel * rel;
        expect(rel, `seed ${seed}, n ${n}`).toBeLessThanOrEqual(tolerance);
      }
    }
    // Spread over all trials should be near one standard error, not just inside three.
    expect(Math.sqrt(sumSq / (20 * checkpoints.length))).toBeLessThan(1.5 * standardError(p));
  });

  // HLL++ switches estimators near 11 500 at p = 14 (Heule et al. 2013; METHODS row 26). Ertl's estimator
  // needs no switch: check that region too.
  it('no estimator seam around the HLL++ threshold at p = 14', () => {
    for (let seed = 0; seed < 5; seed++) {
      for (const n of [9_000, 11_500, 14_000]) {
        const h = sketchOf(range(seed * 2 ** 33, seed * 2 ** 33 + n), 14);
        expect(Math.abs(h.count() - n) / n).toBeLessThanOrEqual(3 * standardError(14));
      }
    }
  });
});

describe('sparse mode', () => {
  it('is exact up to the sparse limit, duplicates ignored', () => {
    const h = new HyperLogLog(12);
    const limit = sparseLimit(12);
    expect(limit).toBe(256);
    for (let i = 0; i < limit; i++) {
      h.add(1000 + i);
      h.add(1000 + i);
      expect(h.count()).toBe(i + 1);
    }
    expect(h.exact).toBe(true);
    h.add(5);
    expect(h.exact).toBe(false);
  });
  it('is tiny when empty and grows with activity', () => {
    const h = new HyperLogLog(12);
    const empty = h.memoryBytes();
    h.add(1);
    h.add(2);
    expect(h.memoryBytes() - empty).toBe(64 + 32); // one small typed array: 4 slots of 8 octets
    for (let i = 0; i < 300; i++) h.add(i);
    expect(h.memoryBytes() - empty).toBe(64 + 4096); // dense registers only
  });
  it('addPair distinguishes pairs exactly', () => {
    const h = new HyperLogLog(12);
    for (let a = 0; a < 10; a++) for (let b = 0; b < 10; b++) h.addPair(a, b);
    h.addPair(3, 4);
    expect(h.count()).toBe(100);
  });
  it('reset empties', () => {
    const h = sketchOf(range(0, 1000));
    h.reset();
    expect(h.count()).toBe(0);
    h.add(7);
    expect(h.count()).toBe(1);
  });
});

describe('merge', () => {
  // METHODS row 27: registers [0,3,1] and [2,1,1] merge to [2,3,1] (register-wise max).
  it('register-wise max [METHODS row 27]', () => {
    const a = denseWith(4, [0, 3, 1]);
    a.merge(denseWith(4, [2, 1, 1]));
    expect([...a.toBytes().subarray(3, 6)]).toEqual([2, 3, 1]);
  });

  const cases: [string, number, number, number, number][] = [
    ['sparse + sparse, union sparse', 0, 100, 50, 150],
    ['sparse + sparse, union dense', 0, 200, 100, 400],
    ['sparse + dense', 0, 50, 20, 5000],
    ['dense + dense', 0, 30_000, 10_000, 60_000],
  ];
  it.each(cases)('%s: bytes equal the sketch of the union', (_name, a0, a1, b0, b1) => {
    const a = sketchOf(range(a0, a1));
    const b = sketchOf(range(b0, b1));
    const union = sketchOf(range(Math.min(a0, b0), Math.max(a1, b1)));
    const ab = a.clone();
    ab.merge(b);
    const ba = b.clone();
    ba.merge(a);
    expect(ab.toBytes()).toEqual(union.toBytes());
    expect(ba.toBytes()).toEqual(union.toBytes());
  });

  it('folds the larger precision down (either side) to the bytes of the union at the smaller p', () => {
    for (const [n1, n2] of [[100, 150], [3000, 9000], [40_000, 20_000]] as const) {
      const hi = sketchOf(range(0, n1), 14);
      const lo = sketchOf(range(n1 / 2, n2), 11);
      const union = sketchOf(range(0, Math.max(n1, n2)), 11);
      const intoLo = lo.clone();
      intoLo.merge(hi);
      expect(intoLo.p).toBe(11);
      expect(intoLo.toBytes()).toEqual(union.toBytes());
      const intoHi = hi.clone();
      intoHi.merge(lo);
      expect(intoHi.p).toBe(11);
      expect(intoHi.toBytes()).toEqual(union.toBytes());
    }
  });
});

describe('serialisation', () => {
  it('round-trips sparse, dense and empty sketches', () => {
    for (const n of [0, 1, 77, 256, 257, 50_000]) {
      const h = sketchOf(range(0, n), 12);
      const back = HyperLogLog.fromBytes(h.toBytes())!;
      expect(back).not.toBeNull();
      expect(back.toBytes()).toEqual(h.toBytes());
      expect(back.count()).toBe(h.count());
    }
  });
  it('rejects malformed bytes with null', () => {
    const good = sketchOf(range(0, 10)).toBytes();
    expect(HyperLogLog.fromBytes(new Uint8Array(0))).toBeNull();
    expect(HyperLogLog.fromBytes(good.subarray(0, good.length - 1))).toBeNull();
    const badVersion = good.slice();
    badVersion[0] = 9;
    expect(HyperLogLog.fromBytes(badVersion)).toBeNull();
    const unsorted = good.slice();
    unsorted.set(good.subarray(7, 15), 15);
    expect(HyperLogLog.fromBytes(unsorted)).toBeNull();
    const dense = sketchOf(range(0, 1000), 4).toBytes();
    dense[3] = 62; // above 65 - p at p = 4
    expect(HyperLogLog.fromBytes(dense)).toBeNull();
  });
  it('constructor rejects precision outside 4..18', () => {
    expect(() => new HyperLogLog(3)).toThrow(RangeError);
    expect(() => new HyperLogLog(19)).toThrow(RangeError);
  });
});
