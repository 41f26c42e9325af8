/**
 * Deterministic byte mutation for fuzzing (common practice, no source): a case is a 32-bit number; the
 * same number always gives the same mutant, so a failing case reproduces from the run's seed alone.
 */

/** xorshift32: small, fast, good enough to pick mutation sites. */
export class Rng {
  private s: number;
  constructor(seed: number) { this.s = (seed | 0) || 0x9e3779b9; }
  next(): number {
    let x = this.s;
    x ^= x << 13; x ^= x >>> 17; x ^= x << 5;
    this.s = x;
    return x >>> 0;
  }
  /** 0 .. n-1 (n >= 1). */
  below(n: number): number { return this.next() % n; }
}

/** Values that sit on boundaries of length and count fields. */
const EDGES = [0x00, 0x01, 0x7f, 0x80, 0xfe, 0xff];

/**
 * A mutant of `seed`: 1..8 edits among byte flips, boundary bytes, 16/32-bit boundary words, a cut,
 * a duplicated or deleted span and inserted random bytes. Never longer than `seed` + 64 bytes.
 */
export function mutate(seed: Uint8Array, caseSeed: number): Uint8Array {
  const r = new Rng(caseSeed);
  let b = Uint8Array.from(seed);
  const edits = 1 + r.below(8);
  for (let e = 0; e < edits; e++) {
    if (b.length === 0) { b = Uint8Array.of(r.below(256)); continue; }
    const at = r.below(b.length);
    switch (r.below(8)) {
      case 0: case 1: b[at] = b[at]! ^ (1 << r.below(8)); break;
      case 2: b[at] = EDGES[r.below(EDGES.length)]!; break;
      case 3: { // a 16- or 32-bit field set to 0, 1, max or a sign edge, either byte order
        const v = [0, 1, 0xffff, 0x7fff, 0x8000, 0xffffffff][r.below(6)]!;
        const n = r.below(2) === 0 ? 2 : 4;
        for (let i = 0; i < n && at + i < b.length; i++) b[at + i] = (v >>> (8 * (r.below(2) ? i : n - 1 - i))) & 0xff;
        break;
      }
      case 4: b = b.slice(0, at); break;
      case 5: { // duplicate a span (repeated records, sets, options)
        const len = 1 + r.below(Math.min(64, b.length - at));
        const out = new Uint8Array(b.length + len);
        out.set(b.subarray(0, at + len)); out.set(b.subarray(at, at + len), at + len); out.set(b.subarray(at + len), at + 2 * len);
        b = out.length > seed.length + 64 ? out.slice(0, seed.length + 64) : out;
        break;
      }
      case 6: { // delete a span
        const len = 1 + r.below(Math.min(32, b.length - at));
        const out = new Uint8Array(b.length - len);
        out.set(b.subarray(0, at)); out.set(b.subarray(at + len), at);
        b = out;
        break;
      }
      default: { // insert random bytes
        const len = 1 + r.below(8);
        if (b.length + len > seed.length + 64) break;
        const out = new Uint8Array(b.length + len);
        out.set(b.subarray(0, at));
        for (let i = 0; i < len; i++) out[at + i] = r.below(256);
        out.set(b.subarray(at), at + len);
        b = out;
      }
    }
  }
  return b;
}
