/**
 * Hashes for sketches and hash tables: integer in, integer out, no strings, no BigInt on the hot path.
 *
 * - `fmix32` / `murmur3_32`: MurmurHash3 (Appleby, SMHasher project, public domain), x86 32-bit variant.
 * - `hashPair(a, b)`: MurmurHash3_x86_32 of the 8 little-endian octets of two 32-bit integers, computed
 *   without building the octets (e.g. (peer id, port) as one table key).
 * - `hash64(lo, hi, out)`: 64-bit mix of a 64-bit integer key given as two 32-bit halves; it is exactly
 *   the first SplitMix64 output (Steele, Lea, Flood, OOPSLA 2014) from state = key, computed with 16-bit
 *   limb products so no BigInt is needed. The mix is a bijection, so distinct keys never collide: the
 *   HyperLogLog's exact sparse mode relies on that.
 * - `SplitMix64`: BigInt reference generator, for tests and seeding only (not for hot paths).
 * Seeds are fixed (0 unless the caller passes one) so sketches, and the alert ids built on them, are
 * reproducible across runs.
 */

const C1 = 0xcc9e2d51;
const C2 = 0x1b873593;

/** MurmurHash3 32-bit finaliser; a bijection on 32-bit integers. */
export function fmix32(h: number): number {
  h ^= h >>> 16;
  h = Math.imul(h, 0x85ebca6b);
  h ^= h >>> 13;
  h = Math.imul(h, 0xc2b2ae35);
  h ^= h >>> 16;
  return h >>> 0;
}

function mixBlock(h: number, k: number): number {
  k = Math.imul(k, C1);
  k = (k << 15) | (k >>> 17);
  k = Math.imul(k, C2);
  h ^= k;
  h = (h << 13) | (h >>> 19);
  return (Math.imul(h, 5) + 0xe6546b64) | 0;
}

/** MurmurHash3_x86_32 of `bytes` with `seed`; unsigned result. */
export function murmur3_32(bytes: Uint8Array, seed = 0): number {
  const len = bytes.length;
  const blocks = len & ~3;
  let h = seed | 0;
  for (let i = 0; i < blocks; i += 4) {
    const k = bytes[i]! | (bytes[i + 1]! << 8) | (bytes[i + 2]! << 16) | (bytes[i + 3]! << 24);
    h = mixBlock(h, k);
  }
  const tail = len & 3;
  if (tail > 0) {
    let k = bytes[blocks]!;
    if (tail > 1) k ^= bytes[blocks + 1]! << 8;
    if (tail > 2) k ^= bytes[blocks + 2]! << 16;
    k = Math.imul(k, C1);
    k = (k << 15) | (k >>> 17);
    k = Math.imul(k, C2);
    h ^= k;
  }
  return fmix32(h ^ len);
}

/** MurmurHash3_x86_32 of the little-endian octets of `a` then `b` (8 octets), with `seed`. */
export function hashPair(a: number, b: number, seed = 0): number {
  let h = mixBlock(seed | 0, a | 0);
  h = mixBlock(h, b | 0);
  return fmix32(h ^ 8);
}

// 64-bit arithmetic on (hi, lo) pairs of unsigned 32-bit words. Results go to module scratch words so
// nothing is allocated per call.
let rHi = 0;
let rLo = 0;

/** (aHi:aLo) * (bHi:bLo) mod 2^64 into rHi:rLo. The high word of the low-word product comes from
 * 16-bit limb products, each below 2^32, so everything stays exact without division. */
function mul64(aHi: number, aLo: number, bHi: number, bLo: number): void {
  const a0 = aLo & 0xffff;
  const a1 = aLo >>> 16;
  const b0 = bLo & 0xffff;
  const b1 = bLo >>> 16;
  const u = a1 * b0 + ((a0 * b0) >>> 16); // < 2^32
  const v = a0 * b1 + (u & 0xffff); // < 2^32
  const hiOfLowProduct = a1 * b1 + (u >>> 16) + (v >>> 16);
  rLo = Math.imul(aLo, bLo) >>> 0;
  rHi = (hiOfLowProduct + Math.imul(aHi, bLo) + Math.imul(aLo, bHi)) >>> 0;
}

/** z ^= z >>> s for 0 < s < 32, on rHi:rLo in place. */
function xorShiftRight(s: number): void {
  rLo = (rLo ^ ((rLo >>> s) | (rHi << (32 - s)))) >>> 0;
  rHi = (rHi ^ (rHi >>> s)) >>> 0;
}

const GAMMA_HI = 0x9e3779b9;
const GAMMA_LO = 0x7f4a7c15;

/**
 * 64-bit hash of the key hi * 2^32 + lo (both unsigned 32-bit): SplitMix64's output function applied to
 * key + 0x9E3779B97F4A7C15. Writes out[0] = low word, out[1] = high word.
 */
export function hash64(lo: number, hi: number, out: Uint32Array): void {
  const sumLo = (lo >>> 0) + GAMMA_LO;
  rLo = sumLo >>> 0;
  rHi = ((hi >>> 0) + GAMMA_HI + (sumLo > 0xffffffff ? 1 : 0)) >>> 0;
  xorShiftRight(30);
  mul64(rHi, rLo, 0xbf58476d, 0x1ce4e5b9);
  xorShiftRight(27);
  mul64(rHi, rLo, 0x94d049bb, 0x133111eb);
  xorShiftRight(31);
  out[0] = rLo;
  out[1] = rHi;
}

const MASK64 = (1n << 64n) - 1n;

/** SplitMix64 generator on BigInt (reference and seeding; not for hot paths). */
export class SplitMix64 {
  private state: bigint;
  constructor(seed: bigint = 0n) {
    this.state = seed & MASK64;
  }
  next(): bigint {
    this.state = (this.state + 0x9e3779b97f4a7c15n) & MASK64;
    let z = this.state;
    z = ((z ^ (z >> 30n)) * 0xbf58476d1ce4e5b9n) & MASK64;
    z = ((z ^ (z >> 27n)) * 0x94d049bb133111ebn) & MASK64;
    return z ^ (z >> 31n);
  }
}
