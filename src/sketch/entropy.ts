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
  private keys: Uint32Array;
  private counts: Float64Array;
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
    this.keys = new Uint32Array(slots);
    this.counts = new Float64Array(slots);
    this.used = new Uint32Array(slots >>> 1);
  }

  /**
   * Adds weight n (> 0; ignored otherwise) to key (coerced to unsigned 32-bit). Returns the key's count
   * after it, or 0 when the key went to the overflow (or n was ignored).
   */
  add(key: number, n = 1): number {
    if (!(n > 0)) return 0;
    key >>>= 0;
    const counts = this.counts;
    const keys = this.keys;
    const mask = keys.length - 1;
    let slot = fmix32(key) & mask;
    while (counts[slot] !== 0) {
      if (keys[slot] === key) {
        const c = counts[slot]! + n;
        counts[slot] = c;
        this.sum += n;
        return c;
      }
      slot = (slot + 1) & mask;
    }
    this.sum += n;
    if (this.stored === this.maxDistinct) {
      this.overflowKeys++;
      this.overflowNLogN += n * Math.log2(n);
      return 0;
    }
    keys[slot] = key;
    counts[slot] = n;
    this.used[this.stored++] = slot;
    if (2 * this.stored >= keys.length && keys.length < slotsFor(this.maxDistinct)) this.grow();
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
        const c = this.counts[this.used[i]!]!;
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
    const mask = this.keys.length - 1;
    let slot = fmix32(key) & mask;
    while (this.counts[slot] !== 0) {
      if (this.keys[slot] === key) return this.counts[slot]!;
      slot = (slot + 1) & mask;
    }
    return 0;
  }

  /** Calls fn for every stored key with its count (overflow keys are not stored). */
  forEach(fn: (key: number, count: number) => void): void {
    for (let i = 0; i < this.stored; i++) {
      const slot = this.used[i]!;
      fn(this.keys[slot]!, this.counts[slot]!);
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
    for (let i = 0; i < this.stored; i++) this.counts[this.used[i]!] = 0;
    this.stored = 0;
    this.overflowKeys = 0;
    this.sum = 0;
    this.overflowNLogN = 0;
    this.nLogNAt = -1;
  }

  /** Typed-array bytes held. */
  memoryBytes(): number {
    return this.keys.byteLength + this.counts.byteLength + this.used.byteLength;
  }

  private grow(): void {
    const oldKeys = this.keys;
    const oldCounts = this.counts;
    const slots = oldKeys.length * 2;
    const mask = slots - 1;
    this.keys = new Uint32Array(slots);
    this.counts = new Float64Array(slots);
    const used = new Uint32Array(slots >>> 1);
    for (let i = 0; i < this.stored; i++) {
      const from = this.used[i]!;
      const key = oldKeys[from]!;
      let slot = fmix32(key) & mask;
      while (this.counts[slot] !== 0) slot = (slot + 1) & mask;
      this.keys[slot] = key;
      this.counts[slot] = oldCounts[from]!;
      used[i] = slot;
    }
    this.used = used;
  }
}

/** Table size for n keys at load <= 1/2: the power of two >= 2n. */
function slotsFor(n: number): number {
  let s = 2;
  while (s < 2 * n) s *= 2;
  return s;
}
