import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { SYN, concat, ether, fragBody, icmp, ipv4, ipv6, tcp, udp } from '../../test/bench/frames.js';
import { Decoder } from './decoder.js';

const LINK_TYPES = [0, 1, 9, 12, 14, 50, 101, 104, 108, 113, 228, 229, 276, 105];

const valid = [
  ether(0x0800, ipv4({ src: '192.0.2.1', dst: '198.51.100.2', proto: 6, payload: tcp(1, 2, SYN, 10) }), [{ vid: 3 }]),
  ether(0x86dd, ipv6({ src: '2001:db8::1', dst: '2001:db8::2', proto: 17, payload: udp(3, 4, 9), ext: [{ type: 44, body: fragBody(0, true, 9) }, { type: 51, body: new Array(14).fill(0) }] })),
  ether(0x0800, ipv4({ src: '198.51.100.2', dst: '192.0.2.1', proto: 1, payload: icmp(3, 3, ipv4({ src: '192.0.2.1', dst: '198.51.100.2', proto: 17, payload: udp(5, 6) })) })),
  ether(0x86dd, ipv6({ src: '2001:db8::2', dst: '2001:db8::1', proto: 58, payload: icmp(1, 4, ipv6({ src: '2001:db8::1', dst: '2001:db8::2', proto: 6, payload: tcp(7, 8, SYN) })) })),
  // MPLS (two labels), PPPoE + PPP, VXLAN and GRE/ERSPAN II around an inner frame
  ether(0x8847, concat([0, 1, 0, 64, 0, 2, 1, 64], ipv4({ src: '192.0.2.1', dst: '198.51.100.2', proto: 17, payload: udp(9, 10, 4) }))),
  ether(0x8864, concat([0x11, 0, 0, 7, 0, 30, 0, 0x21], ipv4({ src: '192.0.2.1', dst: '198.51.100.2', proto: 6, payload: tcp(11, 12, SYN) }))),
  ether(0x0800, ipv4({ src: '10.0.0.1', dst: '10.0.0.2', proto: 17, payload: concat(udp(5000, 4789, 0).subarray(0, 8), [8, 0, 0, 0, 0, 0, 1, 0],
    ether(0x0800, ipv4({ src: '192.0.2.1', dst: '198.51.100.2', proto: 6, payload: tcp(13, 14, SYN) }))) })),
  ether(0x0800, ipv4({ src: '10.0.0.1', dst: '10.0.0.2', proto: 47, payload: concat([0x10, 0, 0x88, 0xbe, 0, 0, 0, 1], [0x10, 0, 0, 1, 0, 0, 0, 0],
    ether(0x0800, ipv4({ src: '192.0.2.1', dst: '198.51.100.2', proto: 17, payload: udp(15, 16, 2) }))) })),
];

/** Every call either decodes or counts exactly one skip reason; nothing escapes as an exception. */
function checkCounts(d: Decoder): void {
  const skipped = d.stats.packets - d.stats.decoded;
  const kept = ['truncated-icmp-quote', 'unmatched-fragment', 'tiny-first-fragment', 'tunnel-too-deep'] as const;
  let reasons = 0;
  for (const [k, n] of Object.entries(d.stats.toObject())) if (!(kept as readonly string[]).includes(k)) reasons += n;
  expect(reasons).toBe(skipped);
}

describe('decoder robustness (fast-check)', () => {
  it('random bytes on every link type never throw and every skip is counted', () => {
    const d = new Decoder();
    fc.assert(fc.property(fc.uint8Array({ maxLength: 200 }), fc.constantFrom(...LINK_TYPES), fc.nat(8), (bytes, lt, pad) => {
      const buf = concat(new Uint8Array(pad), bytes);
      d.decode(buf, pad, bytes.length, lt);
    }), { numRuns: 3000 });
    checkCounts(d);
  });

  it('mutated valid frames (flipped octets, cut lengths) never throw', () => {
    const d = new Decoder();
    fc.assert(fc.property(
      fc.constantFrom(...valid), fc.array(fc.tuple(fc.nat(), fc.integer({ min: 0, max: 255 })), { maxLength: 6 }), fc.nat(), fc.constantFrom(1, 1, 276),
      (frame, edits, cut, lt) => {
        const b = Uint8Array.from(lt === 276 ? concat([frame[12]!, frame[13]!], new Uint8Array(18), frame.subarray(14)) : frame);
        for (const [pos, val] of edits) b[pos % b.length] = val;
        d.decode(b, 0, cut % (b.length + 1), lt);
      }), { numRuns: 3000 });
    checkCounts(d);
    expect(d.stats.decoded).toBeGreaterThan(0);
  });

  it('a capLen longer than the buffer is clamped, not read past', () => {
    const d = new Decoder();
    expect(() => d.decode(valid[0]!.subarray(0, 30), 0, 9999, 1)).not.toThrow();
    checkCounts(d);
  });
});
