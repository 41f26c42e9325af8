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

  it('the one-place decoding of plain Ethernet/IPv4/TCP|UDP fills the view exactly as the general path does', () => {
    // the same IP packet behind Ethernet (where the short path applies) and behind Linux SLL2 (general
    // path); the transport offsets mean nothing for a later fragment (l4Offset -1)
    const fields = (v: Decoder['view'], shift: number) => [v.family, v.proto, v.src4, v.dst4, v.ipBytes, v.sport, v.dport, v.tcpFlags,
      v.icmpType, v.icmpCode, v.icmpError, v.icmpUnreachable, v.quoted.valid, v.fragment, v.l4Offset < 0 ? -1 : v.l4Offset - shift, v.l4Offset < 0 ? -1 : v.l4Limit - shift, v.l4Offset < 0 || v.unfragmented, v.vlan];
    const a = new Decoder(), b = new Decoder();
    const packet = fc.record({
      proto: fc.constantFrom(6, 17, 17, 6, 1, 47), sport: fc.integer({ min: 0, max: 65535 }), dport: fc.constantFrom(53, 443, 4789, 6081, 0, 65535),
      flags: fc.integer({ min: 0, max: 255 }), len: fc.nat(64), frag: fc.constantFrom(0, 0, 0x4000, 0x2000, 0x0001, 0x6000),
    }).map((o) => ipv4({ src: '192.0.2.1', dst: '198.51.100.2', proto: o.proto, fragOffset: o.frag & 0x1fff, moreFragments: (o.frag & 0x2000) !== 0,
      payload: o.proto === 6 ? tcp(o.sport, o.dport, o.flags, o.len) : o.proto === 17 ? udp(o.sport, o.dport, o.len) : new Uint8Array(o.len + 8) }));
    fc.assert(fc.property(packet, fc.array(fc.tuple(fc.nat(), fc.integer({ min: 0, max: 255 })), { maxLength: 3 }), fc.nat(), (ip, edits, cut) => {
      const p = Uint8Array.from(ip);
      for (const [pos, val] of edits) p[pos % p.length] = val;
      const n = cut % (p.length + 1);
      const eth = concat([2, 0, 0, 0, 0, 1, 2, 0, 0, 0, 0, 2, 0x08, 0x00], p.subarray(0, n));
      const sll2 = concat([0x08, 0x00], new Uint8Array(18), p.subarray(0, n));
      const okA = a.decode(eth, 0, eth.length, 1), okB = b.decode(sll2, 0, sll2.length, 276);
      expect(okA).toBe(okB);
      if (okA) expect(fields(a.view, 14)).toEqual(fields(b.view, 20));
    }), { numRuns: 5000 });
    expect(a.stats.toObject()).toEqual(b.stats.toObject());
  });

  it('a capLen longer than the buffer is clamped, not read past', () => {
    const d = new Decoder();
    expect(() => d.decode(valid[0]!.subarray(0, 30), 0, 9999, 1)).not.toThrow();
    checkCounts(d);
  });
});
