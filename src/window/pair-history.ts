/**
 * Which (host, peer) pairs were seen before: the learned peer history behind `new_peers`, TRW's
 * "first contact" and destination prevalence. An open-addressing set of 52-bit keys
 * (host id * 2^26 + peer id) in a Float64Array, in two generations: when the young generation fills,
 * the old one is dropped and the young one becomes old. Memory is bounded by the cap; pairs unused for
 * two generations are forgotten (counted in `forgotten`).
 */
const EMPTY = -1;
const ID_LIMIT = 2 ** 26;

class KeySet {
  keys: Float64Array;
  size = 0;
  constructor(readonly capacity: number, keys?: Float64Array) {
    this.keys = keys ?? new Float64Array(capacity * 2).fill(EMPTY);
  }
  /** A set over a copy of `keys` as snapshot() left them (same slots, so the same probing). */
  static of(keys: Float64Array): KeySet {
    const s = new KeySet(keys.length / 2, keys.slice());
    for (let i = 0; i < keys.length; i++) if (keys[i] !== EMPTY) s.size++;
    return s;
  }
  private slot(key: number): number {
    const mask = this.keys.length - 1;
    const lo = key % 4294967296 | 0;
    const hi = (key / 4294967296) | 0;
    let h = Math.imul(lo ^ Math.imul(hi, 0x9e3779b1), 0x85ebca6b);
    h ^= h >>> 13;
    h = Math.imul(h, 0xc2b2ae35);
    h ^= h >>> 16;
    let i = h & mask;
    for (;;) {
      const k = this.keys[i]!;
      if (k === key || k === EMPTY) return i;
      i = (i + 1) & mask;
    }
  }
  has(key: number): boolean {
    return this.keys[this.slot(key)] === key;
  }
  /** true when newly added. */
  add(key: number): boolean {
    const i = this.slot(key);
    if (this.keys[i] === key) return false;
    this.keys[i] = key;
    this.size++;
    return true;
  }
}

function pow2AtLeast(n: number): number {
  let p = 1024;
  while (p < n) p *= 2;
  return p;
}

export class PairHistory {
  private young: KeySet;
  private old: KeySet | null = null;
  forgotten = 0;
  private readonly genCap: number;

  /** @param maxPairs pairs kept per generation (memory: about 32 bytes per pair over both generations) */
  constructor(maxPairs = 4_000_000) {
    this.genCap = pow2AtLeast(maxPairs);
    this.young = new KeySet(Math.min(this.genCap, 1 << 16));
  }

  static key(host: number, peer: number): number {
    return (host % ID_LIMIT) * ID_LIMIT + (peer % ID_LIMIT);
  }

  has(host: number, peer: number): boolean {
    const k = PairHistory.key(host, peer);
    return this.young.has(k) || (this.old !== null && this.old.has(k));
  }

  /** Records the pair; returns true when it was never seen (in either generation). */
  add(host: number, peer: number): boolean {
    const k = PairHistory.key(host, peer);
    if (this.young.has(k)) return false;
    const known = this.old !== null && this.old.has(k);
    if (this.young.size >= this.young.capacity) this.grow();
    this.young.add(k);
    return !known;
  }

  private grow(): void {
    if (this.young.capacity < this.genCap) {
      const bigger = new KeySet(this.young.capacity * 2);
      const ks = this.young.keys;
      for (let i = 0; i < ks.length; i++) if (ks[i] !== EMPTY) bigger.add(ks[i]!);
      this.young = bigger;
      return;
    }
    if (this.old) this.forgotten += this.old.size;
    this.old = this.young;
    this.young = new KeySet(this.genCap);
  }

  get size(): number {
    return this.young.size + (this.old?.size ?? 0);
  }

  /** Both generations' slot arrays (copies) and the forgotten count, for the state store. */
  snapshot(): PairHistorySnapshot {
    return { young: this.young.keys.slice(), old: this.old ? this.old.keys.slice() : null, forgotten: this.forgotten };
  }

  /** Replaces the history with a snapshot (slot arrays as snapshot() gave them). */
  restore(s: PairHistorySnapshot): void {
    this.young = KeySet.of(s.young);
    this.old = s.old ? KeySet.of(s.old) : null;
    this.forgotten = s.forgotten;
  }
}

export interface PairHistorySnapshot {
  young: Float64Array;
  old: Float64Array | null;
  forgotten: number;
}
