import ipaddr from 'ipaddr.js';

/**
 * Packet builders for tests and the benchmark generator: each returns the octets of one header plus
 * what it wraps. Field layouts: Ethernet/802.1Q (IEEE 802.3, 802.1Q), IPv4 (RFC 791), IPv6 (RFC 8200),
 * TCP (RFC 9293), UDP (RFC 768), ICMP (RFC 792, RFC 4443). Checksums are left 0 (the decoder ignores them).
 */
export type Bytes = Uint8Array;

export function concat(...parts: (Bytes | number[])[]): Bytes {
  const n = parts.reduce((a, p) => a + p.length, 0);
  const out = new Uint8Array(n);
  let o = 0;
  for (const p of parts) { out.set(p, o); o += p.length; }
  return out;
}

export function addrBytes(a: string): Bytes {
  return Uint8Array.from(ipaddr.parse(a).toByteArray());
}

function be16(x: number): number[] {
  return [(x >>> 8) & 255, x & 255];
}

function be32(x: number): number[] {
  return [(x >>> 24) & 255, (x >>> 16) & 255, (x >>> 8) & 255, x & 255];
}

export interface Tag { tpid?: number; vid: number }

/** Ethernet II frame (or 802.3 when `type` <= 1500), with VLAN tags outermost first. */
export function ether(type: number, payload: Bytes, tags: Tag[] = []): Bytes {
  const mac = [0x02, 0, 0, 0, 0, 1, 0x02, 0, 0, 0, 0, 2];
  const tagBytes = tags.flatMap((t) => [...be16(t.tpid ?? 0x8100), ...be16(t.vid & 0xfff)]);
  return concat(mac, tagBytes, be16(type), payload);
}

/** LLC/SNAP header carrying an EtherType (RFC 1042 encapsulation). */
export function snap(type: number, payload: Bytes): Bytes {
  return concat([0xaa, 0xaa, 0x03, 0, 0, 0], be16(type), payload);
}

export interface V4Opts {
  src: string;
  dst: string;
  proto: number;
  payload: Bytes;
  id?: number;
  /** Fragment offset in 8-octet units. */
  fragOffset?: number;
  moreFragments?: boolean;
  /** Option octets (padded to 32 bits by the caller). */
  options?: number[];
  /** Overrides the total length field (default header + payload). */
  totalLength?: number;
}

export function ipv4(o: V4Opts): Bytes {
  const opts = o.options ?? [];
  const hl = 20 + opts.length;
  const total = o.totalLength ?? hl + o.payload.length;
  const frag = (o.moreFragments ? 0x2000 : 0) | (o.fragOffset ?? 0);
  return concat(
    [0x40 | (hl / 4), 0], be16(total), be16(o.id ?? 1), be16(frag), [64, o.proto, 0, 0],
    addrBytes(o.src), addrBytes(o.dst), opts, o.payload,
  );
}

/** One IPv6 extension header: `type` is its own Next Header value; `body` follows the two first octets. */
export interface Ext { type: number; body: number[] }

export function ipv6(o: { src: string; dst: string; proto: number; payload: Bytes; ext?: Ext[]; payloadLength?: number }): Bytes {
  const ext = o.ext ?? [];
  const parts: number[] = [];
  for (let i = 0; i < ext.length; i++) {
    const next = i + 1 < ext.length ? ext[i + 1]!.type : o.proto;
    const e = ext[i]!;
    const len = 2 + e.body.length;
    // length octet: AH counts 32-bit words minus 2 (RFC 4302), Fragment has none, the rest 8-octet units minus 1
    const lenField = e.type === 51 ? len / 4 - 2 : e.type === 44 ? 0 : len / 8 - 1;
    parts.push(next, lenField, ...e.body);
  }
  const first = ext.length ? ext[0]!.type : o.proto;
  const plen = o.payloadLength ?? parts.length + o.payload.length;
  return concat([0x60, 0, 0, 0], be16(plen), [first, 64], addrBytes(o.src), addrBytes(o.dst), parts, o.payload);
}

/** IPv6 Fragment header body (after Next Header and Reserved). */
export function fragBody(offset8: number, more: boolean, id: number): number[] {
  return [...be16((offset8 << 3) | (more ? 1 : 0)), ...be32(id)];
}

export const FIN = 0x01, SYN = 0x02, RST = 0x04, PSH = 0x08, ACK = 0x10;

export function tcp(sport: number, dport: number, flags: number, payloadLen = 0): Bytes {
  return concat(be16(sport), be16(dport), be32(1000), be32(flags & ACK ? 2000 : 0), [0x50, flags], be16(65535), [0, 0, 0, 0], new Uint8Array(payloadLen));
}

export function udp(sport: number, dport: number, payloadLen = 0): Bytes {
  return concat(be16(sport), be16(dport), be16(8 + payloadLen), [0, 0], new Uint8Array(payloadLen));
}

/** ICMP/ICMPv6 message: type, code, checksum, 4 octets (id/sequence or unused), then `body`. */
export function icmp(type: number, code: number, body: Bytes = new Uint8Array(0)): Bytes {
  return concat([type, code, 0, 0, 0, 1, 0, 1], body);
}
