/**
 * An exact set of non-negative integers below 2^53 in one open-addressing table (linear probing) of
 * doubles, cleared in O(size) and kept for reuse: a per-host-window set that is filled and emptied
 * window after window without allocating, where a JS Set rehashes into new tables as it grows.
 */
const EMPTY = -1;
const INITIAL_SLOTS = 16;

export class IntSet {
  private keys = new Float64Array(INITIAL_SLOTS).fill(EMPTY);
  private mask = INITIAL_SLOTS - 1;
  /** Slots in use, in insertion order (iteration and clearing). */
  private used = new Uint32Array(INITIAL_SLOTS >>> 1);
  size = 0;

  /** Adds key; true when it was not in the set. */
  add(key: number): boolean {
    const slot = this.slotOf(key);
    if (this.keys[slot] === key) return false;
    this.keys[slot] = key;
    this.used[this.size++] = slot;
    if (2 * this.size > this.mask) this.grow();
    return true;
  }

  has(key: number): boolean {
    return this.keys[this.slotOf(key)] === key;
  }

  /** The slot holding `key`, or the empty slot where it would go (linear probing). */
  private slotOf(key: number): number {
    const keys = this.keys, mask = this.mask;
    let slot = hash(key) & mask;
    for (let k = keys[slot]!; k !== EMPTY && k !== key; k = keys[slot]!) slot = (slot + 1) & mask;
    return slot;
  }

  /** Calls fn for each key, in insertion order. */
  forEach(fn: (key: number) => void): void {
    for (let i = 0; i < this.size; i++) fn(this.keys[this.used[i]!]!);
  }

  clear(): void {
    for (let i = 0; i < this.size; i++) this.keys[this.used[i]!] = EMPTY;
    this.size = 0;
  }

  /** Empties the set and, when its table grew past `maxSlots`, starts again with a small one. */
  trim(maxSlots: number): void {
    this.clear();
    if (this.mask + 1 <= maxSlots) return;
    this.keys = new Float64Array(INITIAL_SLOTS).fill(EMPTY);
    this.mask = INITIAL_SLOTS - 1;
    this.used = new Uint32Array(INITIAL_SLOTS >>> 1);
  }

  /** Typed-array bytes held. */
  memoryBytes(): number {
    return this.keys.byteLength + this.used.byteLength;
  }

  private grow(): void {
    const old = this.keys, oldUsed = this.used;
    const slots = (this.mask + 1) * 2, mask = slots - 1;
    const keys = new Float64Array(slots).fill(EMPTY);
    const used = new Uint32Array(slots >>> 1);
    for (let i = 0; i < this.size; i++) {
      const key = old[oldUsed[i]!]!;
      let slot = hash(key) & mask;
      while (keys[slot] !== EMPTY) slot = (slot + 1) & mask;
      keys[slot] = key;
      used[i] = slot;
    }
    this.keys = keys;
    this.mask = mask;
    this.used = used;
  }
}

/** Both halves of a key below 2^53 mixed (multiply-xorshift, MurmurHash3's fmix32 constants). */
function hash(key: number): number {
  const lo = key | 0; // ToInt32 keeps the low 32 bits
  const hi = (key / 4294967296) | 0;
  let h = Math.imul(lo ^ Math.imul(hi, 0x9e3779b1), 0x85ebca6b);
  h ^= h >>> 13;
  h = Math.imul(h, 0xc2b2ae35);
  return h ^ (h >>> 16);
}
