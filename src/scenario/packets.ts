/**
 * Frame building for generated captures. One FrameBuilder owns one reused buffer; each call writes the
 * link, IP and transport headers for one packet, zero-fills the payload up to the capture limit and
 * returns the length on the wire. Lengths are true (IPv4 total length, IPv6 payload length, UDP length)
 * even when the capture keeps only a snaplen's worth of bytes. Payload octets are zeros, so transport
 * checksums can be computed from the headers alone (zeros add nothing to a one's complement sum).
 */

/** Link types written by the generator (pcap LINKTYPE_ETHERNET, LINKTYPE_RAW). */
export type GenLinkType = 1 | 101;

/** TCP flag bits, RFC 9293 section 3.1 (CWR/ECE from RFC 3168). */
export const FIN = 0x01, SYN = 0x02, RST = 0x04, PSH = 0x08, ACK = 0x10;

/** A generated host or peer: IPv4 as an unsigned integer, or 16 IPv6 octets, and a MAC. */
export interface Endpoint {
  readonly v6: boolean;
  readonly v4: number;
  readonly v6bytes: Uint8Array;
  readonly mac: Uint8Array;
  /** Text form as FlowRecord carries it. */
  readonly text: string;
}

const IPV4_HDR = 20, IPV6_HDR = 40, TCP_HDR = 20, UDP_HDR = 8, ICMP_HDR = 8, ETH_HDR = 14;
const BUF_BYTES = 65536 + 128;

/**
 * RFC 1071 one's complement sum of big-endian 16-bit words of `buf[off, off+len)` added to `initial`,
 * folded to 16 bits (not inverted). An odd last octet is padded with a zero octet.
 */
export function onesComplementSum(buf: Uint8Array, off: number, len: number, initial = 0): number {
  let sum = initial;
  const end = off + (len & ~1);
  for (let i = off; i < end; i += 2) sum += (buf[i]! << 8) | buf[i + 1]!;
  if (len & 1) sum += buf[off + len - 1]! << 8;
  while (sum > 0xffff) sum = (sum & 0xffff) + (sum >>> 16);
  return sum;
}

/** RFC 1071 Internet checksum: the inverted folded sum. */
export function internetChecksum(buf: Uint8Array, off: number, len: number, initial = 0): number {
  return ~onesComplementSum(buf, off, len, initial) & 0xffff;
}

export class FrameBuilder {
  readonly buf = new Uint8Array(BUF_BYTES);
  private readonly ipOff: number;
  private ipId = 0;

  /** @param captureLimit bytes that will be kept of each frame (the writer's snaplen): zero-filled. */
  constructor(readonly linkType: GenLinkType, private readonly captureLimit: number) {
    this.ipOff = linkType === 1 ? ETH_HDR : 0;
  }

  /** TCP segment with `payload` zero octets; returns the frame length on the wire. */
  tcp(src: Endpoint, dst: Endpoint, sport: number, dport: number, seq: number, ack: number, flags: number, payload: number): number {
    const b = this.buf;
    const l4 = this.ip(src, dst, 6, TCP_HDR + payload);
    b[l4] = sport >>> 8; b[l4 + 1] = sport & 255;
    b[l4 + 2] = dport >>> 8; b[l4 + 3] = dport & 255;
    put32(b, l4 + 4, seq);
    put32(b, l4 + 8, (flags & ACK) !== 0 ? ack : 0);
    b[l4 + 12] = (TCP_HDR / 4) << 4;
    b[l4 + 13] = flags;
    b[l4 + 14] = 0xfa; b[l4 + 15] = 0xf0; // window 64240
    b[l4 + 16] = 0; b[l4 + 17] = 0;
    b[l4 + 18] = 0; b[l4 + 19] = 0;
    this.transportChecksum(src, l4, 6, TCP_HDR + payload, TCP_HDR, 16);
    return this.finish(l4 + TCP_HDR, payload);
  }

  /** UDP datagram with `payload` zero octets. */
  udp(src: Endpoint, dst: Endpoint, sport: number, dport: number, payload: number): number {
    const b = this.buf;
    const len = UDP_HDR + payload;
    const l4 = this.ip(src, dst, 17, len);
    b[l4] = sport >>> 8; b[l4 + 1] = sport & 255;
    b[l4 + 2] = dport >>> 8; b[l4 + 3] = dport & 255;
    b[l4 + 4] = len >>> 8; b[l4 + 5] = len & 255;
    b[l4 + 6] = 0; b[l4 + 7] = 0;
    this.transportChecksum(src, l4, 17, len, UDP_HDR, 6);
    return this.finish(l4 + UDP_HDR, payload);
  }

  /** ICMP (IPv4) or ICMPv6 echo request/reply; `reply` picks type 0/129 over 8/128 (RFC 792, RFC 4443). */
  echo(src: Endpoint, dst: Endpoint, reply: boolean, id: number, seq: number, payload: number): number {
    const b = this.buf;
    const proto = src.v6 ? 58 : 1;
    const len = ICMP_HDR + payload;
    const l4 = this.ip(src, dst, proto, len);
    b[l4] = src.v6 ? (reply ? 129 : 128) : (reply ? 0 : 8);
    b[l4 + 1] = 0;
    b[l4 + 2] = 0; b[l4 + 3] = 0;
    b[l4 + 4] = id >>> 8; b[l4 + 5] = id & 255;
    b[l4 + 6] = seq >>> 8; b[l4 + 7] = seq & 255;
    // ICMPv4 sums the message only; ICMPv6 adds the pseudo-header (RFC 4443 section 2.3)
    if (src.v6) this.transportChecksum(src, l4, 58, len, ICMP_HDR, 2);
    else put16(b, l4 + 2, internetChecksum(b, l4, ICMP_HDR));
    return this.finish(l4 + ICMP_HDR, payload);
  }

  /** Writes link + IP headers; returns the transport header's offset. */
  private ip(src: Endpoint, dst: Endpoint, proto: number, l4len: number): number {
    const b = this.buf;
    const o = this.ipOff;
    if (this.linkType === 1) {
      b.set(dst.mac, 0);
      b.set(src.mac, 6);
      b[12] = src.v6 ? 0x86 : 0x08; b[13] = src.v6 ? 0xdd : 0x00;
    }
    if (src.v6) {
      b[o] = 0x60; b[o + 1] = 0; b[o + 2] = 0; b[o + 3] = 0;
      put16(b, o + 4, l4len);
      b[o + 6] = proto; b[o + 7] = 64;
      b.set(src.v6bytes, o + 8);
      b.set(dst.v6bytes, o + 24);
      return o + IPV6_HDR;
    }
    b[o] = 0x45; b[o + 1] = 0;
    put16(b, o + 2, IPV4_HDR + l4len);
    this.ipId = (this.ipId + 1) & 0xffff;
    put16(b, o + 4, this.ipId);
    b[o + 6] = 0x40; b[o + 7] = 0; // DF
    b[o + 8] = 64; b[o + 9] = proto;
    b[o + 10] = 0; b[o + 11] = 0;
    put32(b, o + 12, src.v4);
    put32(b, o + 16, dst.v4);
    put16(b, o + 10, internetChecksum(b, o, IPV4_HDR));
    return o + IPV4_HDR;
  }

  /** Pseudo-header (RFC 9293 3.1 / RFC 768 / RFC 8200 8.1) + transport header; payload is zeros. */
  private transportChecksum(src: Endpoint, l4: number, proto: number, l4len: number, hdrLen: number, at: number): void {
    const b = this.buf;
    const o = this.ipOff;
    const addrOff = src.v6 ? o + 8 : o + 12;
    const addrLen = src.v6 ? 32 : 8;
    const pseudo = onesComplementSum(b, addrOff, addrLen, proto + (l4len >>> 16) + (l4len & 0xffff));
    let c = internetChecksum(b, l4, hdrLen, pseudo);
    if (proto === 17 && c === 0) c = 0xffff; // UDP sends an all-ones checksum for a computed zero
    put16(b, l4 + at, c);
  }

  private finish(payloadOff: number, payload: number): number {
    const wire = payloadOff + payload;
    const keep = Math.min(wire, this.captureLimit);
    if (keep > payloadOff) this.buf.fill(0, payloadOff, keep);
    return wire;
  }
}

function put16(b: Uint8Array, o: number, v: number): void {
  b[o] = (v >>> 8) & 255; b[o + 1] = v & 255;
}

function put32(b: Uint8Array, o: number, v: number): void {
  b[o] = (v >>> 24) & 255; b[o + 1] = (v >>> 16) & 255; b[o + 2] = (v >>> 8) & 255; b[o + 3] = v & 255;
}
