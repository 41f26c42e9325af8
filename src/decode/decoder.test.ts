import { describe, expect, it } from 'vitest';
import { ACK, RST, SYN, addrBytes, concat, ether, fragBody, icmp, ipv4, ipv6, snap, tcp, udp } from '../../test/bench/frames.js';
import { Decoder } from './decoder.js';
import { Fragment } from './view.js';

const A = '192.0.2.10', B = '198.51.100.20';
const n4 = (s: string) => { const b = addrBytes(s); return ((b[0]! << 24) | (b[1]! << 16) | (b[2]! << 8) | b[3]!) >>> 0; };
const words = (s: string) => { const b = addrBytes(s); return [0, 4, 8, 12].map((i) => ((b[i]! << 24) | (b[i + 1]! << 16) | (b[i + 2]! << 8) | b[i + 3]!) >>> 0); };

function run(bytes: Uint8Array, linkType = 1, d = new Decoder()) {
  // place the packet at an offset inside a larger buffer, as readers do
  const buf = new Uint8Array(bytes.length + 10);
  buf.set(bytes, 7);
  const ok = d.decode(buf, 7, bytes.length, linkType);
  return { ok, v: d.view, d };
}

const tcpSyn = ipv4({ src: A, dst: B, proto: 6, payload: tcp(40000, 443, SYN) });

describe('link layers (METHODS.md 1.3)', () => {
  it('Ethernet II IPv4 TCP', () => {
    const { ok, v } = run(ether(0x0800, tcpSyn));
    expect(ok).toBe(true);
    expect([v.family, v.proto, v.src4, v.dst4, v.sport, v.dport, v.tcpFlags, v.ipBytes, v.vlan])
      .toEqual([4, 6, n4(A), n4(B), 40000, 443, SYN, 40, -1]);
  });

  it('raw IP (101 and the 12/14/228/229 aliases) picks the version nibble', () => {
    for (const lt of [101, 12, 14, 228, 229]) expect(run(tcpSyn, lt).v.dport).toBe(443);
    const v6 = ipv6({ src: '2001:db8:60::1', dst: '2001:db8::2', proto: 17, payload: udp(5353, 53, 10) });
    const { ok, v } = run(v6, 101);
    expect(ok).toBe(true);
    expect([v.family, v.proto, v.sport, v.dport, v.ipBytes]).toEqual([6, 17, 5353, 53, 58]);
    expect([...v.src6]).toEqual(words('2001:db8:60::1'));
  });

  it('Linux SLL (113): EtherType at offset 14', () => {
    const sll = concat([0, 0, 0, 1, 0, 6, 2, 0, 0, 0, 0, 1, 0, 0], [0x08, 0x00], tcpSyn);
    expect(run(sll, 113).v.dport).toBe(443);
  });

  it('Linux SLL2 (276): EtherType at offset 0', () => {
    const sll2 = concat([0x08, 0x00, 0, 0, 0, 0, 0, 2, 0, 1, 0, 6, 2, 0, 0, 0, 0, 1, 0, 0], tcpSyn);
    expect(run(sll2, 276).v.dport).toBe(443);
  });

  it('BSD null (0) in both byte orders and loop (108) big-endian', () => {
    // family 2 written little-endian and big-endian (host order of the capturing machine, METHODS.md 1.3)
    expect(run(concat([2, 0, 0, 0], tcpSyn), 0).ok).toBe(true);
    expect(run(concat([0, 0, 0, 2], tcpSyn), 0).ok).toBe(true);
    const v6 = ipv6({ src: '2001:db8::1', dst: '2001:db8::2', proto: 6, payload: tcp(1, 2, SYN) });
    for (const fam of [24, 28, 30]) {
      expect(run(concat([fam, 0, 0, 0], v6), 0).v.family).toBe(6);
      expect(run(concat([0, 0, 0, fam], v6), 0).v.family).toBe(6);
      expect(run(concat([0, 0, 0, fam], v6), 108).v.family).toBe(6);
    }
    const { ok, d } = run(concat([7, 0, 0, 0], tcpSyn), 0);
    expect(ok).toBe(false);
    expect(d.stats.get('null-unknown-family')).toBe(1);
  });

  it('802.3 length frame with LLC/SNAP carrying IPv4; non-SNAP LLC is skipped', () => {
    const payload = snap(0x0800, tcpSyn);
    expect(run(ether(payload.length, payload)).v.dport).toBe(443);
    const { ok, d } = run(ether(3, new Uint8Array([0x42, 0x42, 0x03])));
    expect(ok).toBe(false);
    expect(d.stats.get('llc-not-snap')).toBe(1);
  });

  it('Type/Length 1501-1535 is malformed (METHODS.md 2.1, check value 9 boundary)', () => {
    const { ok, d } = run(ether(0x05dd, tcpSyn));
    expect(ok).toBe(false);
    expect(d.stats.get('bad-ethertype')).toBe(1);
  });

  it('802.1Q, 802.1ad and 0x9100 QinQ keep the outermost VID; depth is capped at 4', () => {
    expect(run(ether(0x0800, tcpSyn, [{ vid: 42 }])).v.vlan).toBe(42);
    const qinq = run(ether(0x0800, tcpSyn, [{ tpid: 0x88a8, vid: 100 }, { tpid: 0x8100, vid: 7 }]));
    expect([qinq.ok, qinq.v.vlan]).toEqual([true, 100]);
    expect(run(ether(0x0800, tcpSyn, [{ tpid: 0x9100, vid: 300 }, { vid: 5 }])).v.vlan).toBe(300);
    const deep = run(ether(0x0800, tcpSyn, [1, 2, 3, 4, 5].map((vid) => ({ vid }))));
    expect(deep.ok).toBe(false);
    expect(deep.d.stats.get('vlan-too-deep')).toBe(1);
    // a later untagged packet on the same decoder has no VLAN
    expect(run(ether(0x0800, tcpSyn), 1, qinq.d).v.vlan).toBe(-1);
  });

  it('ARP, other EtherTypes and unknown link types are counted by reason', () => {
    const d = new Decoder();
    run(ether(0x0806, new Uint8Array(28)), 1, d);
    run(ether(0x88cc, new Uint8Array(28)), 1, d);
    run(tcpSyn, 105, d); // IEEE802_11: undecoded
    expect(d.stats.toObject()).toEqual({ arp: 1, 'non-ip': 1, 'undecoded-linktype': 1 });
    expect(d.stats.undecodedLinkType).toBe(105);
    expect(d.stats.decoded).toBe(0);
  });
});

describe('IPv4 (RFC 791)', () => {
  it('header options are skipped by IHL', () => {
    const p = ipv4({ src: A, dst: B, proto: 17, payload: udp(1234, 53, 4), options: [1, 1, 1, 0, 0x94, 4, 0, 0] });
    const { ok, v } = run(p, 101);
    expect([ok, v.sport, v.dport, v.ipBytes]).toEqual([true, 1234, 53, 40]);
  });

  it('IHL < 5 and total length < header are malformed', () => {
    const bad = Uint8Array.from(tcpSyn);
    bad[0] = 0x44;
    expect(run(bad, 101).d.stats.get('bad-ihl')).toBe(1);
    const short = ipv4({ src: A, dst: B, proto: 6, payload: tcp(1, 2, SYN), totalLength: 19 });
    expect(run(short, 101).d.stats.get('bad-ipv4-length')).toBe(1);
  });

  it('a snaplen-truncated packet still counts the true IP total length', () => {
    const full = ether(0x0800, ipv4({ src: A, dst: B, proto: 6, payload: tcp(40000, 443, ACK, 1460) }));
    const { ok, v } = run(full.subarray(0, 68));
    expect([ok, v.ipBytes, v.dport]).toEqual([true, 1500, 443]);
  });

  it('truncated headers are counted and skipped', () => {
    const d = new Decoder();
    expect(run(tcpSyn.subarray(0, 19), 101, d).ok).toBe(false);
    expect(run(tcpSyn.subarray(0, 30), 101, d).ok).toBe(false);
    expect(run(ipv4({ src: A, dst: B, proto: 17, payload: udp(1, 2) }).subarray(0, 25), 101, d).ok).toBe(false);
    expect(d.stats.toObject()).toEqual({ 'truncated-ipv4': 1, 'truncated-tcp': 1, 'truncated-udp': 1 });
  });

  it('TCP data offset < 5 is malformed', () => {
    const p = Uint8Array.from(tcpSyn);
    p[20 + 12] = 0x40;
    expect(run(p, 101).d.stats.get('bad-tcp-offset')).toBe(1);
  });

  it('later fragments are tied to the first by (src, dst, id, proto); unmatched ones get no ports', () => {
    const d = new Decoder();
    const first = ipv4({ src: A, dst: B, proto: 17, id: 777, moreFragments: true, payload: udp(5000, 9999, 1472) });
    const later = ipv4({ src: A, dst: B, proto: 17, id: 777, fragOffset: 185, payload: new Uint8Array(100) });
    expect(run(first, 101, d).v.dport).toBe(9999);
    let r = run(later, 101, d);
    expect([r.ok, r.v.fragment, r.v.sport, r.v.dport, r.v.ipBytes]).toEqual([true, Fragment.Matched, 5000, 9999, 120]);
    const other = ipv4({ src: A, dst: B, proto: 17, id: 778, fragOffset: 185, payload: new Uint8Array(100) });
    r = run(other, 101, d);
    expect([r.ok, r.v.fragment, r.v.sport, r.v.dport]).toEqual([true, Fragment.Unmatched, 0, 0]);
    expect(d.stats.get('unmatched-fragment')).toBe(1);
  });

  it('a first fragment too short for the TCP header is counted as tiny and kept', () => {
    const p = ipv4({ src: A, dst: B, proto: 6, id: 5, moreFragments: true, payload: tcp(1111, 22, SYN).subarray(0, 8) });
    const { ok, v, d } = run(p, 101);
    expect([ok, v.sport, v.dport]).toEqual([true, 1111, 22]);
    expect(d.stats.get('tiny-first-fragment')).toBe(1);
  });

  it('a first fragment with the flags but not the whole TCP header is tiny too (RFC 1858), flags kept', () => {
    const p = ipv4({ src: A, dst: B, proto: 6, id: 6, moreFragments: true, payload: tcp(1111, 22, SYN).subarray(0, 16) });
    const { ok, v, d } = run(p, 101);
    expect([ok, v.sport, v.dport, v.tcpFlags]).toEqual([true, 1111, 22, SYN]);
    expect(d.stats.get('tiny-first-fragment')).toBe(1);
  });
});

describe('MPLS, PPPoE, PPP and Cisco HDLC framings (the well-formed cases: test/golden/captures, scapy + dpkt)', () => {
  const label = (v: number, bottom: boolean) => [(v >>> 12) & 255, (v >>> 4) & 255, ((v & 15) << 4) | (bottom ? 1 : 0), 64];
  it('an MPLS stack deeper than the cap, a cut stack and a non-IP payload are counted and skipped (RFC 3032 section 2.1)', () => {
    const d = new Decoder();
    const deep = concat(...Array.from({ length: 9 }, (_, i) => label(16 + i, false)), label(99, true), tcpSyn);
    expect(run(ether(0x8847, deep), 1, d).ok).toBe(false);
    expect(run(ether(0x8847, concat(label(16, false), [0, 1])), 1, d).ok).toBe(false);
    expect(run(ether(0x8847, concat(label(16, true), [0, 0, 0, 0], new Uint8Array(14))), 1, d).ok).toBe(false);
    expect(d.stats.toObject()).toEqual({ 'mpls-too-deep': 1, 'truncated-mpls': 1, 'mpls-non-ip': 1 });
  });
  it('PPP: a one-octet (compressed) protocol field is read (RFC 1661 section 6.5); LCP is not IP', () => {
    const d = new Decoder();
    expect(run(concat([0x21], tcpSyn), 9, d).v.dport).toBe(443);
    expect(run(concat([0xff, 0x03, 0xc0, 0x21], [1, 1, 0, 4]), 9, d).ok).toBe(false);
    expect(run(ether(0x8864, [0x11, 0, 0, 1]), 1, d).ok).toBe(false);
    expect(d.stats.toObject()).toEqual({ 'ppp-non-ip': 1, 'truncated-pppoe': 1 });
  });
  it('Cisco HDLC framing inside LINKTYPE_PPP_HDLC (50) as well as C_HDLC (104), from memory of the link-type table', () => {
    expect(run(concat([0x0f, 0x00, 0x08, 0x00], tcpSyn), 50).v.dport).toBe(443);
    expect(run(concat([0xff, 0x03, 0x00, 0x21], tcpSyn), 50).v.dport).toBe(443);
    expect(run(concat([0x8f, 0x00], []), 104).d.stats.get('truncated-hdlc')).toBe(1);
  });
});

describe('tunnels (well-formed cases: test/golden/captures/tunnels.pcap, scapy + dpkt)', () => {
  const O1 = '10.20.0.1', O2 = '10.20.0.2';
  const vxlan = (inner: Uint8Array, flags = 0x08) => ether(0x0800, ipv4({ src: O1, dst: O2, proto: 17, payload: concat(udp(49152, 4789, 0).subarray(0, 8), [flags, 0, 0, 0, 0, 0x10, 0x92, 0], inner) }));
  it('VXLAN is opened; three VXLAN levels deep the third stays a tunnel packet, counted (RFC 7348 section 5)', () => {
    const d = new Decoder();
    const one = vxlan(ether(0x0800, tcpSyn));
    expect([run(one, 1, d).v.dport, run(one, 1, d).v.src4]).toEqual([443, n4(A)]);
    const three = vxlan(vxlan(vxlan(ether(0x0800, tcpSyn))));
    const r = run(three, 1, d);
    expect([r.ok, r.v.proto, r.v.dport]).toEqual([true, 17, 4789]);
    expect(d.stats.get('tunnel-too-deep')).toBe(1);
  });
  it('UDP to 4789 without the VXLAN I flag, and GRE version 1 (enhanced GRE, RFC 2637), stay as they are', () => {
    expect(run(vxlan(ether(0x0800, tcpSyn), 0)).v.dport).toBe(4789);
    const pptp = ether(0x0800, ipv4({ src: O1, dst: O2, proto: 47, payload: concat([0x30, 0x01, 0x88, 0x0b, 0, 0, 0, 0, 0, 0, 0, 0], tcpSyn) }));
    expect(run(pptp).v.proto).toBe(47);
  });
});

describe('TCP cut by the snap length (RFC 9293 section 3.1: data offset in octet 12, flags in octet 13)', () => {
  it('IPv6 TCP captured to 68 octets keeps ports and flags: 14 octets of TCP are enough', () => {
    const full = ether(0x86dd, ipv6({ src: '2001:db8:60::5', dst: '2001:db8::99', proto: 6, payload: tcp(50000, 443, SYN | ACK, 1200) }));
    const { ok, v } = run(full.subarray(0, 68));
    // RFC 8200: payload length + the 40-octet header is the true IP length
    expect([ok, v.sport, v.dport, v.tcpFlags, v.ipBytes]).toEqual([true, 50000, 443, SYN | ACK, 1260]);
  });

  it('13 captured octets miss the flags: skipped as truncated-tcp', () => {
    const full = ether(0x86dd, ipv6({ src: '2001:db8:60::5', dst: '2001:db8::99', proto: 6, payload: tcp(50000, 443, SYN) }));
    const { ok, d } = run(full.subarray(0, 14 + 40 + 13));
    expect([ok, d.stats.get('truncated-tcp')]).toEqual([false, 1]);
  });

  it('a whole datagram whose TCP header is shorter than 20 octets is malformed: skipped', () => {
    const p = ipv4({ src: A, dst: B, proto: 6, payload: tcp(1111, 22, SYN).subarray(0, 16) });
    const { ok, d } = run(p, 101);
    expect([ok, d.stats.get('truncated-tcp')]).toEqual([false, 1]);
  });
});

describe('IPv6 (RFC 8200) extension chain', () => {
  const S = '2001:db8:60::5', D = '2001:db8::99';
  it('walks hop-by-hop, routing, destination options, AH (RFC 4302 length rule) to TCP', () => {
    const p = ipv6({
      src: S, dst: D, proto: 6, payload: tcp(50000, 80, SYN),
      ext: [{ type: 0, body: [1, 4, 0, 0, 0, 0] }, { type: 43, body: new Array(22).fill(0) }, { type: 60, body: [1, 4, 0, 0, 0, 0] },
        // AH with Payload Len 4 = (4 + 2) * 4 = 24 octets (METHODS.md 10 row 12)
        { type: 51, body: new Array(22).fill(0) }],
    });
    const { ok, v } = run(p, 101);
    expect([ok, v.proto, v.sport, v.dport, v.tcpFlags]).toEqual([true, 6, 50000, 80, SYN]);
    expect(v.ipBytes).toBe(p.length);
    // the AH length octet is 4 (32-bit words minus 2), the routing one 2 ((2 + 1) * 8 = 24 octets)
    expect(p[40 + 8 + 1]).toBe(2);
    expect(p[40 + 8 + 24 + 8 + 1]).toBe(4);
  });

  it('hop-by-hop after the first header is malformed; more than 10 headers are refused', () => {
    const mis = ipv6({ src: S, dst: D, proto: 6, payload: tcp(1, 2, SYN), ext: [{ type: 60, body: [1, 4, 0, 0, 0, 0] }, { type: 0, body: [1, 4, 0, 0, 0, 0] }] });
    expect(run(mis, 101).d.stats.get('ipv6-hop-by-hop-misplaced')).toBe(1);
    const many = ipv6({ src: S, dst: D, proto: 6, payload: tcp(1, 2, SYN), ext: new Array(11).fill({ type: 60, body: [1, 4, 0, 0, 0, 0] }) });
    expect(run(many, 101).d.stats.get('ipv6-ext-chain-too-long')).toBe(1);
    const ten = ipv6({ src: S, dst: D, proto: 6, payload: tcp(1, 2, SYN), ext: new Array(10).fill({ type: 60, body: [1, 4, 0, 0, 0, 0] }) });
    expect(run(ten, 101).ok).toBe(true);
  });

  it('ESP and No Next Header end the chain', () => {
    expect(run(ipv6({ src: S, dst: D, proto: 50, payload: new Uint8Array(16) }), 101).v.proto).toBe(50);
    const nn = run(ipv6({ src: S, dst: D, proto: 59, payload: new Uint8Array(0), ext: [{ type: 60, body: [1, 4, 0, 0, 0, 0] }] }), 101);
    expect([nn.ok, nn.v.proto, nn.v.sport]).toEqual([true, 59, 0]);
  });

  it('fragment header: offset 0 carries ports, later fragments are tied by id', () => {
    const d = new Decoder();
    const first = ipv6({ src: S, dst: D, proto: 17, payload: udp(7000, 53, 100), ext: [{ type: 44, body: fragBody(0, true, 0xabcdef) }] });
    const later = ipv6({ src: S, dst: D, proto: 17, payload: new Uint8Array(64), ext: [{ type: 44, body: fragBody(14, false, 0xabcdef) }] });
    expect(run(first, 101, d).v.dport).toBe(53);
    const r = run(later, 101, d);
    expect([r.ok, r.v.proto, r.v.fragment, r.v.sport, r.v.dport, r.v.ipBytes]).toEqual([true, 17, Fragment.Matched, 7000, 53, 40 + 8 + 64]);
  });

  it('IPv4-mapped addresses normalise to IPv4', () => {
    const p = ipv6({ src: '::ffff:192.0.2.1', dst: '::ffff:198.51.100.2', proto: 17, payload: udp(1, 2) });
    const { v } = run(p, 101);
    expect([v.family, v.src4, v.dst4]).toEqual([4, n4('192.0.2.1'), n4('198.51.100.2')]);
  });
});

describe('ICMP and ICMPv6 (RFC 792, RFC 4443)', () => {
  it('port unreachable quotes the UDP probe (type 3 code 3, METHODS.md 10 row 14)', () => {
    const probe = ipv4({ src: A, dst: B, proto: 17, payload: udp(33434, 33435, 12) });
    const err = ipv4({ src: B, dst: A, proto: 1, payload: icmp(3, 3, probe.subarray(0, 28)) });
    const { ok, v } = run(ether(0x0800, err));
    expect([ok, v.proto, v.icmpType, v.icmpCode, v.sport, v.dport]).toEqual([true, 1, 3, 3, 0, 771]);
    expect([v.icmpError, v.icmpUnreachable]).toEqual([true, true]);
    const q = v.quoted;
    expect([q.valid, q.family, q.proto, q.src4, q.dst4, q.sport, q.dport]).toEqual([true, 4, 17, n4(A), n4(B), 33434, 33435]);
  });

  it('fragmentation needed (code 4) and time exceeded are errors but not unreachable', () => {
    const probe = ipv4({ src: A, dst: B, proto: 6, payload: tcp(1, 2, SYN) }).subarray(0, 28);
    for (const [t, c] of [[3, 4], [11, 0]] as const) {
      const { v } = run(ipv4({ src: B, dst: A, proto: 1, payload: icmp(t, c, probe) }), 101);
      expect([v.icmpError, v.icmpUnreachable, v.quoted.valid, v.quoted.dport]).toEqual([true, false, true, 2]);
    }
  });

  it('echo request is not an error; a cut quote is counted and the packet kept', () => {
    const echo = run(ipv4({ src: A, dst: B, proto: 1, payload: icmp(8, 0, new Uint8Array(56)) }), 101);
    expect([echo.v.icmpError, echo.v.dport]).toEqual([false, 0x0800]);
    const cut = run(ipv4({ src: B, dst: A, proto: 1, payload: icmp(3, 3, new Uint8Array([0x45, 0, 0])) }), 101);
    expect([cut.ok, cut.v.quoted.valid]).toEqual([true, false]);
    expect(cut.d.stats.get('truncated-icmp-quote')).toBe(1);
  });

  it('ICMPv6 port unreachable (type 1 code 4) quotes an IPv6 UDP probe', () => {
    const S = '2001:db8:60::5', D = '2001:db8::99';
    const probe = ipv6({ src: S, dst: D, proto: 17, payload: udp(40001, 161, 20) });
    const { ok, v } = run(ipv6({ src: D, dst: S, proto: 58, payload: icmp(1, 4, probe.subarray(0, 48)) }), 101);
    expect([ok, v.proto, v.dport, v.icmpError, v.icmpUnreachable]).toEqual([true, 58, 0x0104, true, true]);
    expect([v.quoted.valid, v.quoted.family, v.quoted.proto, v.quoted.sport, v.quoted.dport]).toEqual([true, 6, 17, 40001, 161]);
    expect([...v.quoted.src6]).toEqual(words(S));
  });

  it('TCP RST flags are read', () => {
    const { v } = run(ipv4({ src: B, dst: A, proto: 6, payload: tcp(443, 40000, RST | ACK) }), 101);
    expect(v.tcpFlags).toBe(0x14); // RST-ACK, METHODS.md 10 row 13
  });
});
