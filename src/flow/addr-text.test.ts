import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { ipv4ToString, ipv6ToString } from '../util/addr.js';
import { Ipv4TextCache, Ipv6TextCache } from './addr-text.js';

function octets(w: number[]): Uint8Array {
  const b = new Uint8Array(16);
  w.forEach((x, j) => { b[4 * j] = x >>> 24; b[4 * j + 1] = (x >>> 16) & 255; b[4 * j + 2] = (x >>> 8) & 255; b[4 * j + 3] = x & 255; });
  return b;
}

describe('address text caches', () => {
  // tiny caches: every way is evicted and refilled many times over
  it('IPv4: the cached text is always the text of the address asked for (fast-check)', () => {
    fc.assert(fc.property(fc.array(fc.oneof(fc.constantFrom(0, 0xc0000201, 0xc6336407), fc.nat({ max: 0xffffffff })), { maxLength: 200 }), (addrs) => {
      const c = new Ipv4TextCache(4);
      for (const a of [...addrs, ...addrs]) expect(c.text(a)).toBe(ipv4ToString(a));
    }), { numRuns: 200 });
  });

  it('IPv6: the cached text is always the RFC 5952 text of the four words asked for (fast-check)', () => {
    const word = fc.oneof(fc.constantFrom(0, 0x20010db8, 0xffff), fc.nat({ max: 0xffffffff }));
    fc.assert(fc.property(fc.array(fc.tuple(word, word, word, word), { maxLength: 100 }), (addrs) => {
      const c = new Ipv6TextCache(4);
      for (const w of [...addrs, ...addrs]) expect(c.text(w[0], w[1], w[2], w[3])).toBe(ipv6ToString(octets(w)));
    }), { numRuns: 200 });
  });
});
