import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { SplitMix64, fmix32, hash64, hashPair, murmur3_32 } from './hash.js';

const bytes = (...xs: number[]) => Uint8Array.from(xs);
const ascii = (s: string) => new TextEncoder().encode(s);

describe('murmur3_32', () => {
  // MurmurHash3_x86_32 vectors: METHODS.md 4.6 and row 29 (SMHasher-derived test files of several libraries).
  it.each([
    [bytes(), 0, 0x00000000],
    [bytes(), 1, 0x514e28b7],
    [bytes(), 0xffffffff, 0x81f16f39],
    [bytes(0xff, 0xff, 0xff, 0xff), 0, 0x76293b50],
    [bytes(0x21, 0x43, 0x65, 0x87), 0, 0xf55b516b],
    [bytes(0x21, 0x43, 0x65, 0x87), 0x5082edee, 0x2362f9de],
    [bytes(0x21, 0x43, 0x65), 0, 0x7e4a8634],
  ])('vector %#', (input, seed, want) => {
    expect(murmur3_32(input, seed)).toBe(want);
  });

  // METHODS.md 4.6 extra ASCII vectors [C: recomputed there].
  it('ASCII vectors', () => {
    expect(murmur3_32(ascii('hello'), 0)).toBe(0x248bfa47);
    expect(murmur3_32(ascii('The quick brown fox jumps over the lazy dog'), 0)).toBe(0x2e4ff723);
  });
});

describe('fmix32', () => {
  // fmix32(0) = 0 follows from the xor-shift-multiply form in METHODS.md 4.6 (no constant is added).
  it('fixes zero and is unsigned', () => {
    expect(fmix32(0)).toBe(0);
    expect(fmix32(-1)).toBeGreaterThanOrEqual(0);
  });
});

describe('hashPair', () => {
  // Defined as MurmurHash3_x86_32 of the 8 little-endian octets of (a, b): checked against murmur3_32 itself.
  it('equals murmur3_32 of the little-endian octets', () => {
    fc.assert(
      fc.property(fc.integer({ min: 0, max: 0xffffffff }), fc.integer({ min: 0, max: 0xffffffff }), fc.integer(), (a, b, seed) => {
        const buf = new Uint8Array(8);
        const dv = new DataView(buf.buffer);
        dv.setUint32(0, a, true);
        dv.setUint32(4, b, true);
        expect(hashPair(a, b, seed)).toBe(murmur3_32(buf, seed));
      }),
      { numRuns: 300 },
    );
  });
});

describe('hash64 and SplitMix64', () => {
  // METHODS.md row 30: SplitMix64 first output from state 0 is 0xE220A8397B1DCDAF [C].
  it('reference generator first output from state 0', () => {
    expect(new SplitMix64(0n).next()).toBe(0xe220a8397b1dcdafn);
  });

  it('hash64(key) is the first SplitMix64 output from state = key (same vector)', () => {
    const out = new Uint32Array(2);
    hash64(0, 0, out);
    expect((BigInt(out[1]!) << 32n) | BigInt(out[0]!)).toBe(0xe220a8397b1dcdafn);
  });

  // Differential check of the 16-bit-limb arithmetic against the BigInt reference above.
  it('matches the BigInt reference on random 64-bit keys', () => {
    const out = new Uint32Array(2);
    fc.assert(
      fc.property(fc.bigInt({ min: 0n, max: (1n << 64n) - 1n }), (key) => {
        hash64(Number(key & 0xffffffffn), Number(key >> 32n), out);
        const got = (BigInt(out[1]!) << 32n) | BigInt(out[0]!);
        expect(got).toBe(new SplitMix64(key).next());
      }),
      { numRuns: 2000 },
    );
  });
});
