import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import ipaddr from 'ipaddr.js';
import { broadcastHostBits, CidrSet, ipv4ToString, ipv6ToString, parseIpv4, parseIpv6 } from './addr.js';

// Reference: ipaddr.js (the full parser the fast paths stand in front of) and RFC 4291 section 2.2
// (text forms of IPv6 addresses: hex groups, one "::" for one or more zero groups).

const octets16 = fc.uint8Array({ minLength: 16, maxLength: 16 });

/** Zero runs are common in real addresses: make some groups zero so "::" shows up in the text. */
const sparse16 = fc.tuple(octets16, fc.array(fc.boolean(), { minLength: 8, maxLength: 8 })).map(([b, zero]) => {
  const out = Uint8Array.from(b);
  zero.forEach((z, g) => { if (z) { out[2 * g] = 0; out[2 * g + 1] = 0; } });
  return out;
});

function uncompressed(b: Uint8Array, upper: boolean): string {
  const g: string[] = [];
  for (let i = 0; i < 8; i++) g.push(((b[2 * i]! << 8) | b[2 * i + 1]!).toString(16));
  const s = g.join(':');
  return upper ? s.toUpperCase() : s;
}

describe('parseIpv4', () => {
  it('reads every canonical dotted quad (ipaddr.js as reference)', () => {
    fc.assert(fc.property(fc.integer({ min: 0, max: 0xffffffff }), (a) => {
      const text = ipv4ToString(a);
      expect(parseIpv4(text)).toBe(a);
      const ref = ipaddr.IPv4.parse(text).toByteArray();
      expect(parseIpv4(text)).toBe(((ref[0]! << 24) | (ref[1]! << 16) | (ref[2]! << 8) | ref[3]!) >>> 0);
    }));
  });
  it('turns down other spellings, which go to the full parser (from memory: leading zeros read as octal there)', () => {
    for (const s of ['', '1.2.3', '1.2.3.4.5', '01.2.3.4', '1.2.3.256', '1..2.3', '1.2.3.4 ', '0x1.2.3.4', '1.2.3.', '.1.2.3', '::1']) {
      expect(parseIpv4(s)).toBe(-1);
    }
  });
});

describe('parseIpv6', () => {
  it('reads RFC 5952 text and uncompressed text of any address as ipaddr.js does', () => {
    const out = new Uint8Array(16);
    fc.assert(fc.property(sparse16, fc.boolean(), (b, upper) => {
      for (const text of [ipv6ToString(b), uncompressed(b, upper)]) {
        if (text.includes('.')) continue; // IPv4-mapped text is dotted: left to the full parser
        expect(parseIpv6(text, out)).toBe(true);
        expect([...out]).toEqual(ipaddr.IPv6.parse(text).toByteArray());
      }
    }));
  });
  it('never accepts text ipaddr.js rejects (random strings over the IPv6 alphabet)', () => {
    const out = new Uint8Array(16);
    const chars = fc.constantFrom('0', '1', 'a', 'F', ':', ':', ':', 'e', '9');
    fc.assert(fc.property(fc.array(chars, { maxLength: 24 }).map((a) => a.join('')), (text) => {
      if (!parseIpv6(text, out)) return;
      expect(ipaddr.IPv6.isValid(text)).toBe(true);
      expect([...out]).toEqual(ipaddr.IPv6.parse(text).toByteArray());
    }), { numRuns: 5000 });
  });
  it('turns down malformed and mixed forms', () => {
    const out = new Uint8Array(16);
    for (const s of ['', ':', ':1', '1:', '1::2::3', '1:::2', '12345::', '1:2:3:4:5:6:7:8:9', '1:2:3:4:5:6:7:8::', '::ffff:1.2.3.4', 'fe80::1%eth0', 'g::']) {
      expect(parseIpv6(s, out)).toBe(false);
    }
  });
});

describe('broadcastHostBits', () => {
  it('is the trailing one bits of a /8 to /30 directed broadcast, else 0 (RFC 1122 section 3.2.1.3, from memory)', () => {
    const bits = (s: string) => broadcastHostBits(parseIpv4(s));
    expect(['192.168.2.255', '192.168.5.255', '10.255.255.255', '10.0.0.3', '10.0.0.127'].map(bits)).toEqual([8, 9, 24, 2, 7]);
    expect(['10.0.0.1', '10.0.0.2', '10.0.0.254'].map(bits)).toEqual([0, 0, 0]);
  });
});

describe('CidrSet', () => {
  it('knows the directed broadcast of each IPv4 prefix from /8 to /30 (RFC 1122 section 3.2.1.3, from memory)', () => {
    const set = new CidrSet(['192.168.1.0/24', '10.0.0.0/8', '172.16.4.0/31', '198.51.100.7/32', '2001:db8::/64']);
    expect(['192.168.1.255', '10.255.255.255'].map((a) => set.isBroadcast(a))).toEqual([true, true]);
    // host parts that are not all ones, prefixes without a broadcast (/31, /32), IPv6 (none at all)
    expect(['192.168.1.254', '10.60.1.255', '172.16.4.1', '198.51.100.7', '2001:db8::ffff:ffff:ffff:ffff', 'x'].map((a) => set.isBroadcast(a)))
      .toEqual([false, false, false, false, false, false]);
  });
  // the membership test before the fast paths, kept as the reference
  function refHas(cidrs: string[], addr: string): boolean {
    if (!ipaddr.isValid(addr)) return false;
    let a = ipaddr.parse(addr);
    if (a.kind() === 'ipv6' && (a as ipaddr.IPv6).isIPv4MappedAddress()) a = (a as ipaddr.IPv6).toIPv4Address();
    return cidrs.some((c) => {
      const [net, bits] = c.includes('/') ? ipaddr.parseCIDR(c) : [ipaddr.parse(c), a.kind() === 'ipv6' ? 128 : 32];
      return net.kind() === a.kind() && a.match(net, bits);
    });
  }
  const v4cidr = fc.tuple(fc.integer({ min: 0, max: 0xffffffff }), fc.integer({ min: 0, max: 32 })).map(([a, n]) => `${ipv4ToString(a)}/${n}`);
  const v6cidr = fc.tuple(sparse16, fc.integer({ min: 0, max: 128 })).map(([b, n]) => `${uncompressed(b, false)}/${n}`);
  it('answers as ipaddr.js matching does for IPv4, IPv6 and IPv4-mapped addresses', () => {
    fc.assert(fc.property(fc.array(fc.oneof(v4cidr, v6cidr), { minLength: 1, maxLength: 4 }), fc.integer({ min: 0, max: 0xffffffff }), sparse16, (cidrs, a4, b6) => {
      const set = new CidrSet(cidrs);
      // addresses near the networks as well as random ones
      const near = cidrs.map((c) => c.split('/')[0]!);
      for (const addr of [ipv4ToString(a4), ipv6ToString(b6), `::ffff:${ipv4ToString(a4)}`, ...near]) {
        expect(set.has(addr)).toBe(refHas(cidrs, addr));
      }
    }), { numRuns: 500 });
  });
  it('keeps the documentation ranges apart (RFC 5737, RFC 3849)', () => {
    const set = new CidrSet(['192.0.2.0/24', '2001:db8::/32']);
    expect(set.has('192.0.2.77')).toBe(true);
    expect(set.has('192.0.3.1')).toBe(false);
    expect(set.has('2001:db8:60::5')).toBe(true);
    expect(set.has('2001:db9::5')).toBe(false);
    expect(set.has('not an address')).toBe(false);
  });
});
