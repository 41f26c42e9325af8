/**
 * Space-Saving top-k (Metwally, Agrawal, El Abbadi, "Efficient Computation of Frequent and Top-k Elements
 * in Data Streams", ICDT 2005) over unsigned 32-bit keys, with weights.
 *
 * m entries (key, count, error). A monitored key adds its weight; an unmonitored key, when all m entries
 * are taken, replaces the entry with the smallest count c_min and gets count c_min + n, error c_min.
 * Guarantees (the paper's, also with weights): every key with total weight > N/m is monitored, and
 * count - error <= true weight <= count for every monitored key.
 * Layout: typed arrays; an indexed binary min-heap finds c_min in O(log m) (the paper's stream-summary
 * list is O(1) for unit weights only); a linear-probing table maps key -> entry. `add` allocates nothing.
 */
import { fmix32 } from './hash.js';

export interface TopEntry {
  key: number;
  count: number;
  error: number;
}

export class TopK {
  readonly capacity: number;
  private readonly keys: Uint32Array;
  private readonly counts: Float64Array;
  private readonly errors: Float64Array;
  /** heap[i] = entry index; pos[entry] = its heap position. Min-heap on counts. */
  private readonly heap: Int32Array;
  private readonly pos: Int32Array;
  /** Open addressing: entry index + 1, 0 = empty. */
  private readonly table: Int32Array;
  private size = 0;
  private sum = 0;

  constructor(m: number) {
    if (!Number.isInteger(m) || m < 1) throw new RangeError('TopK capacity must be a positive integer');
    this.capacity = m;
    this.keys = new Uint32Array(m);
    this.counts = new Float64Array(m);
    this.errors = new Float64Array(m);
    this.heap = new Int32Array(m);
    this.pos = new Int32Array(m);
    let slots = 2;
    while (slots < 2 * m) slots *= 2;
    this.table = new Int32Array(slots);
  }

  /** Total weight added (N). */
  get total(): number {
    return this.sum;
  }

  /** Adds weight n (> 0; ignored otherwise) to key (coerced to unsigned 32-bit). */
  add(key: number, n = 1): void {
    if (!(n > 0)) return;
    key >>>= 0;
    this.sum += n;
    const slot = this.find(key);
    const found = this.table[slot]!;
    if (found !== 0) {
      const e = found - 1;
      this.counts[e]! += n;
      this.siftDown(this.pos[e]!);
      return;
    }
    if (this.size < this.capacity) {
      const e = this.size++;
      this.keys[e] = key;
      this.counts[e] = n;
      this.errors[e] = 0;
      this.table[slot] = e + 1;
      this.heap[e] = e;
      this.pos[e] = e;
      this.siftUp(e);
      return;
    }
    const e = this.heap[0]!;
    this.remove(this.keys[e]!);
    const cMin = this.counts[e]!;
    this.keys[e] = key;
    this.errors[e] = cMin;
    this.counts[e] = cMin + n;
    this.table[this.find(key)] = e + 1;
    this.siftDown(0);
  }

  /** The largest count monitored (0 when empty), without allocating. */
  maxCount(): number {
    let m = 0;
    for (let e = 0; e < this.size; e++) if (this.counts[e]! > m) m = this.counts[e]!;
    return m;
  }

  /** The k entries with the largest counts, largest first (ties by smaller key). Allocates the result. */
  top(k: number): TopEntry[] {
    const out: TopEntry[] = [];
    for (let e = 0; e < this.size; e++) out.push({ key: this.keys[e]!, count: this.counts[e]!, error: this.errors[e]! });
    out.sort((a, b) => b.count - a.count || a.key - b.key);
    return out.slice(0, Math.max(0, k));
  }

  reset(): void {
    this.size = 0;
    this.sum = 0;
    this.table.fill(0);
  }

  /** Slot holding key, or the empty slot where it would go. */
  private find(key: number): number {
    const mask = this.table.length - 1;
    let slot = fmix32(key) & mask;
    for (;;) {
      const v = this.table[slot]!;
      if (v === 0 || this.keys[v - 1] === key) return slot;
      slot = (slot + 1) & mask;
    }
  }

  /** Linear-probing delete with backward shift (no tombstones). */
  private remove(key: number): void {
    const table = this.table;
    const mask = table.length - 1;
    let hole = this.find(key);
    table[hole] = 0;
    let slot = (hole + 1) & mask;
    while (table[slot] !== 0) {
      const home = fmix32(this.keys[table[slot]! - 1]!) & mask;
      // Move the entry into the hole unless its home lies cyclically in (hole, slot].
      const stays = hole <= slot ? hole < home && home <= slot : hole < home || home <= slot;
      if (!stays) {
        table[hole] = table[slot]!;
        table[slot] = 0;
        hole = slot;
      }
      slot = (slot + 1) & mask;
    }
  }

  private siftUp(i: number): void {
    const { heap, pos, counts } = this;
    const e = heap[i]!;
    const c = counts[e]!;
    while (i > 0) {
      const parent = (i - 1) >>> 1;
      const pe = heap[parent]!;
      if (counts[pe]! <= c) break;
      heap[i] = pe;
      pos[pe] = i;
      i = parent;
    }
    heap[i] = e;
    pos[e] = i;
  }

  private siftDown(i: number): void {
    const { heap, pos, counts } = this;
    const n = this.size;
    const e = heap[i]!;
    const c = counts[e]!;
    for (;;) {
      let child = 2 * i + 1;
      if (child >= n) break;
      if (child + 1 < n && counts[heap[child + 1]!]! < counts[heap[child]!]!) child++;
      const ce = heap[child]!;
      if (counts[ce]! >= c) break;
      heap[i] = ce;
      pos[ce] = i;
      i = child;
    }
    heap[i] = e;
    pos[e] = i;
  }
}
