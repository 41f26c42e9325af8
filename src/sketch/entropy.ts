/**
 * Shannon entropy of a weighted histogram over unsigned 32-bit keys (ports, interned address ids),
 * kept exactly in an open-addressing table of typed arrays.
 *
 * Form (METHODS.md 5): H = log2 S - (1/S) * sum n_i log2 n_i. `add` only counts; the sum of
 * n_i log2 n_i is taken over the stored keys when the entropy is asked for (once per window, against
 * many adds) and kept until the next `add`. Normalised entropy H / log2(distinct), 0 when
 * distinct <= 1 (normalisation as in Berezinski, Jasiul, Szpyrka, Entropy 17(4), 2015; the <= 1 rule is
 * our convention).
 *
 * Bound: at most `maxDistinct` keys (default 4096) are stored. Once full, every `add` of a key that is
 * not stored goes to an overflow and is counted as its own new key with count n (as if overflow traffic
 * were fully spread). Then `saturated` is true, `distinct` is an upper bound and `entropy()` is an
 * estimate that leans high. The table grows from 16 slots with the number of keys and is kept (and
 * cleared in O(distinct)) by `reset()`, so a counter reused window after window stops allocating.
 */
import { fmix32 } from './hash.js';

const INITIAL_SLOTS = 16;

export class EntropyCounter {
  readonly maxDistinct: number;
  /**
   * Slot i is cells 2i (key) and 2i + 1 (count, 0 = empty), eight octets: a probe reads one cache
   * line, where separate key and count arrays cost two misses once the host tables outgrow the cache.
   */
  private cells: Uint32Array;
  private mask: number;
  /** Slots in use, in insertion order: lets reset() clear only what was written. */
  private used: Uint32Array;
  private stored = 0;
  private overflowKeys = 0;
  private sum = 0;
  /** sum of n log2 n over the overflow's keys (each its own key), taken as they come. */
  private overflowNLogN = 0;
  /** sum n_i log2 n_i as last computed, valid while `sum` equals `nLogNAt`. */
  private nLogN = 0;
  private nLogNAt = -1;

  constructor(maxDistinct = 4096) {
    if (!Number.isInteger(maxDistinct) || maxDistinct < 1) throw new RangeError('maxDistinct must be a positive integer');
    this.maxDistinct = maxDistinct;
    const slots = Math.min(INITIAL_SLOTS, slotsFor(maxDistinct));
    this.cells = new Uint32Array(2 * slots);
    this.mask = slots - 1;
    this.used = new Uint32Array(slots >>> 1);
  }

  /**
   * Adds whole weight n (>= 1, ignored otherwise; counts of flows, each key's total below 2^32) to key
   * (coerced to unsigned 32-bit). Returns the key's count after it, or 0 when the key went to the
   * overflow (or n was ignored).
   */
  add(key: number, n = 1): number {
    if (!(n >= 1)) return 0;
    n = Math.floor(n);
    key >>>= 0;
    const cells = this.cells;
    const mask = this.mask;
    let slot = fmix32(key) & mask;
    let c = cells[2 * slot + 1]!;
    while (c !== 0) {
      if (cells[2 * slot] === key) {
        c += n;
        cells[2 * slot + 1] = c;
        this.sum += n;
        return c;
      }
      slot = (slot + 1) & mask;
      c = cells[2 * slot + 1]!;
    }
    this.sum += n;
    if (this.stored === this.maxDistinct) {
      this.overflowKeys++;
      this.overflowNLogN += n * Math.log2(n);
      return 0;
    }
    cells[2 * slot] = key;
    cells[2 * slot + 1] = n;
    this.used[this.stored++] = slot;
    if (2 * this.stored > mask && mask + 1 < slotsFor(this.maxDistinct)) this.grow();
    return n;
  }

  /** Entropy in bits; 0 for an empty histogram. */
  entropy(): number {
    if (this.sum <= 0) return 0;
    const h = Math.log2(this.sum) - this.sumNLogNow() / this.sum;
    return h > 0 ? h : 0; // rounding can leave a tiny negative for a single key
  }

  private sumNLogNow(): number {
    if (this.nLogNAt !== this.sum) {
      let t = this.overflowNLogN;
      for (let i = 0; i < this.stored; i++) {
        const c = this.cells[2 * this.used[i]! + 1]!;
        t += c * Math.log2(c);
      }
      this.nLogN = t;
      this.nLogNAt = this.sum;
    }
    return this.nLogN;
  }

  /** H / log2(distinct); 0 when distinct <= 1. */
  normalised(): number {
    const d = this.distinct;
    if (d <= 1) return 0;
    return Math.min(1, this.entropy() / Math.log2(d));
  }

  /** Distinct keys seen (an upper bound when saturated). */
  get distinct(): number {
    return this.stored + this.overflowKeys;
  }

  /** Sum of all weights added. */
  get total(): number {
    return this.sum;
  }

  /** True once keys went to the overflow: `distinct` and `entropy()` are then estimates. */
  get saturated(): boolean {
    return this.overflowKeys > 0;
  }

  /** Count stored for key (0 if absent or in the overflow). */
  countOf(key: number): number {
    key >>>= 0;
    const cells = this.cells;
    let slot = fmix32(key) & this.mask;
    while (cells[2 * slot + 1] !== 0) {
      if (cells[2 * slot] === key) return cells[2 * slot + 1]!;
      slot = (slot + 1) & this.mask;
    }
    return 0;
  }

  /** Calls fn for every stored key with its count (overflow keys are not stored). */
  forEach(fn: (key: number, count: number) => void): void {
    for (let i = 0; i < this.stored; i++) {
      const slot = this.used[i]!;
      fn(this.cells[2 * slot]!, this.cells[2 * slot + 1]!);
    }
  }

  /** The k stored keys with the highest counts, highest first (ties by key). O(distinct · k). */
  top(k: number): { key: number; count: number }[] {
    const best: { key: number; count: number }[] = [];
    this.forEach((key, count) => {
      if (best.length === k && count <= best[k - 1]!.count) return;
      let i = best.length < k ? best.length : k - 1;
      if (best.length < k) best.push({ key, count });
      else best[i] = { key, count };
      while (i > 0 && (best[i - 1]!.count < count || (best[i - 1]!.count === count && best[i - 1]!.key > key))) {
        best[i] = best[i - 1]!;
        best[i - 1] = { key, count };
        i--;
      }
    });
    return best;
  }

  /** Empties the histogram in O(distinct), keeping the table for reuse. */
  reset(): void {
    for (let i = 0; i < this.stored; i++) this.cells[2 * this.used[i]! + 1] = 0;
    this.stored = 0;
    this.overflowKeys = 0;
    this.sum = 0;
    this.overflowNLogN = 0;
    this.nLogNAt = -1;
  }

  /**
   * Empties the histogram and, when its table grew past `maxSlots`, gives it back for a small one: a
   * pool of reused counters then holds at most that much per counter after a busy window.
   */
  trim(maxSlots: number): void {
    this.reset();
    if (this.mask + 1 <= maxSlots) return;
    const slots = Math.min(INITIAL_SLOTS, slotsFor(this.maxDistinct));
    this.cells = new Uint32Array(2 * slots);
    this.mask = slots - 1;
    this.used = new Uint32Array(slots >>> 1);
  }

  /** Typed-array bytes held. */
  memoryBytes(): number {
    return this.cells.byteLength + this.used.byteLength;
  }

  private grow(): void {
    const old = this.cells;
    const slots = (this.mask + 1) * 2;
    const mask = slots - 1;
    const cells = new Uint32Array(2 * slots);
    const used = new Uint32Array(slots >>> 1);
    for (let i = 0; i < this.stored; i++) {
      const from = this.used[i]!;
      const key = old[2 * from]!;
      let slot = fmix32(key) & mask;
      while (cells[2 * slot + 1] !== 0) slot = (slot + 1) & mask;
      cells[2 * slot] = key;
      cells[2 * slot + 1] = old[2 * from + 1]!;
      used[i] = slot;
    }
    this.cells = cells;
    this.mask = mask;
    this.used = used;
  }
}

/** Table size for n keys at load <= 1/2: the power of two >= 2n. */
function slotsFor(n: number): number {
  let s = 2;
  while (s < 2 * n) s *= 2;
  return s;
}
