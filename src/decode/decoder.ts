import { u16 } from './bytes.js';
import { IpLayer } from './ip.js';
import { DecodeStats, R } from './stats.js';
import { PacketView } from './view.js';

/** VLAN tags followed per frame at most (METHODS.md 2.1: cap the depth). */
export const MAX_VLAN_TAGS = 4;
/** MPLS label stack entries followed at most before the bottom of stack (ours, no source). */
export const MAX_MPLS_LABELS = 8;
/** Tunnels opened per packet at most (a tunnel in a tunnel is real; deeper nesting is hostile; ours). */
export const MAX_TUNNELS = 2;

/** UDP ports of the overlay encapsulations opened: VXLAN (RFC 7348 section 5), GENEVE (RFC 8926 section 3.3). */
export const VXLAN_PORT = 4789;
export const GENEVE_PORT = 6081;
const ETH_TEB = 0x6558; // transparent Ethernet bridging: an Ethernet frame follows
const ERSPAN_2 = 0x88be; // ERSPAN type I (no header) and II (8-octet header), GRE sequence bit tells them apart
const ERSPAN_3 = 0x22eb;

/**
 * Decodes one packet at a time into a reused view, from the link layer (METHODS.md 1.3) to the
 * transport header. Never throws on bad bytes: a skipped packet returns false and its reason is counted
 * in `stats`. Allocates nothing per packet.
 */
export class Decoder {
  readonly view = new PacketView();
  readonly stats = new DecodeStats();
  private readonly ip = new IpLayer(this.view, this.stats);
  private tags = 0;
  private tunnels = 0;
  // Readers hand over Buffers (file chunks) and plain Uint8Arrays (carry buffers, replayed heads). Seen
  // through one plain Uint8Array view per chunk, every byte access here stays monomorphic.
  private lastChunk: Uint8Array | null = null;
  private lastPlain: Uint8Array = new Uint8Array(0);

  /** Decodes `capLen` bytes at `off` of `buf` captured on link type `linkType`; false when skipped. */
  decode(buf: Uint8Array, off: number, capLen: number, linkType: number): boolean {
    this.stats.packets++;
    this.view.vlan = -1;
    this.tags = 0;
    this.tunnels = 0;
    if (buf !== this.lastChunk) {
      this.lastChunk = buf;
      this.lastPlain = buf.constructor === Uint8Array ? buf : new Uint8Array(buf.buffer, buf.byteOffset, buf.length);
    }
    const b = this.lastPlain;
    const end = off + capLen > b.length ? b.length : off + capLen;
    const ok = (linkType === 1 && this.common(b, off, end)) || this.link(b, off, end, linkType);
    if (ok) this.stats.decoded++;
    return ok;
  }

  /**
   * The packet most captures are made of, decoded in one place: untagged Ethernet, IPv4 without
   * options or fragmentation, a whole TCP or UDP header, no tunnel. It fills the view exactly as the
   * general path below would (decoder.test.ts compares the two on random frames); anything else, or
   * any doubt, returns false and the general path decodes the packet from its start.
   */
  private common(b: Uint8Array, p: number, end: number): boolean {
    const ip = p + 14;
    if (ip + 20 > end || b[p + 12] !== 0x08 || b[p + 13] !== 0x00 || b[ip] !== 0x45) return false;
    const total = (b[ip + 2]! << 8) | b[ip + 3]!;
    // MF or a fragment offset; a total length of 0 (offload) or shorter than the header
    if ((b[ip + 6]! & 0x3f) !== 0 || b[ip + 7] !== 0 || total < 28) return false;
    const proto = b[ip + 9]!;
    const ipEnd = ip + total;
    const limit = ipEnd < end ? ipEnd : end;
    const l4 = ip + 20;
    let flags = 0;
    if (proto === 6) {
      if (l4 + 20 > limit || b[l4 + 12]! >>> 4 < 5) return false;
      flags = b[l4 + 13]!;
    } else if (proto === 17) {
      if (l4 + 8 > limit) return false;
      const dport = (b[l4 + 2]! << 8) | b[l4 + 3]!;
      if (dport === VXLAN_PORT || dport === GENEVE_PORT) return false;
    } else return false;
    const v = this.view;
    v.family = 4;
    v.proto = proto;
    v.src4 = ((b[ip + 12]! << 24) | (b[ip + 13]! << 16) | (b[ip + 14]! << 8) | b[ip + 15]!) >>> 0;
    v.dst4 = ((b[ip + 16]! << 24) | (b[ip + 17]! << 16) | (b[ip + 18]! << 8) | b[ip + 19]!) >>> 0;
    v.ipBytes = total;
    v.clearTransport();
    v.sport = (b[l4]! << 8) | b[l4 + 1]!;
    v.dport = (b[l4 + 2]! << 8) | b[l4 + 3]!;
    v.tcpFlags = flags;
    v.l4Offset = l4;
    v.l4Limit = limit;
    v.unfragmented = true;
    return true;
  }

  private link(b: Uint8Array, p: number, end: number, linkType: number): boolean {
    switch (linkType) {
      case 1: // ETHERNET
        if (p + 14 > end) return this.skip(R['truncated-ethernet']);
        return this.typeOrLength(b, p + 14, end, u16(b, p + 12));
      case 101: case 12: case 14: case 228: case 229: // RAW and its aliases; the version nibble decides
        return this.raw(b, p, end);
      case 113: // LINUX_SLL: protocol type at offset 14, 16-octet header
        if (p + 16 > end) return this.skip(R['truncated-sll']);
        return this.sllProtocol(b, p + 16, end, u16(b, p + 14));
      case 276: // LINUX_SLL2: protocol type at offset 0, 20-octet header
        if (p + 20 > end) return this.skip(R['truncated-sll2']);
        return this.sllProtocol(b, p + 20, end, u16(b, p));
      case 0: { // NULL: address family in the capturing host's byte order
        if (p + 4 > end) return this.skip(R['truncated-null']);
        let fam = (b[p]! | (b[p + 1]! << 8) | (b[p + 2]! << 16) | (b[p + 3]! << 24)) >>> 0;
        if (fam > 0xffff) fam = ((fam >>> 24) | ((fam >>> 8) & 0xff00) | ((fam << 8) & 0xff0000) | (fam << 24)) >>> 0;
        return this.addressFamily(b, p + 4, end, fam);
      }
      case 108: // LOOP: address family big-endian
        if (p + 4 > end) return this.skip(R['truncated-null']);
        return this.addressFamily(b, p + 4, end, ((b[p]! << 24) | (b[p + 1]! << 16) | (b[p + 2]! << 8) | b[p + 3]!) >>> 0);
      case 9: // PPP: HDLC-like framing (FF 03, RFC 1662) or the bare PPP protocol field (RFC 1661)
        if (p + 2 <= end && b[p] === 0xff && b[p + 1] === 0x03) return this.ppp(b, p + 2, end);
        return this.ppp(b, p, end);
      case 50: // PPP_HDLC: FF 03 then PPP (RFC 1662), or 0F/8F 00 then an EtherType (Cisco framing, RFC 1547)
      case 104: // C_HDLC (Cisco HDLC): address 0F/8F, control 00, EtherType
        if (p + 4 > end) return this.skip(R['truncated-hdlc']);
        if (b[p] === 0xff && b[p + 1] === 0x03) return this.ppp(b, p + 2, end);
        return this.etherType(b, p + 4, end, u16(b, p + 2));
      default:
        if (this.stats.undecodedLinkType < 0) this.stats.undecodedLinkType = linkType;
        return this.skip(R['undecoded-linktype']);
    }
  }

  private inet4(b: Uint8Array, p: number, end: number): boolean {
    return this.ip.ipv4(b, p, end) && this.opened(b);
  }

  private inet6(b: Uint8Array, p: number, end: number): boolean {
    return this.ip.ipv6(b, p, end) && this.opened(b);
  }

  /**
   * After the IP layer: a mirror or overlay encapsulation (VXLAN, GENEVE, GRE carrying Ethernet, ERSPAN)
   * is opened and the packet it carries decoded in its place, since that is the traffic being watched;
   * anything else, and a header that does not parse as its encapsulation, stays the packet it is.
   * GRE carrying IP and IP-in-IP stay tunnels: there the tunnel itself is the flow.
   */
  private opened(b: Uint8Array): boolean {
    const v = this.view;
    const l4 = v.l4Offset, end = v.l4Limit;
    if (l4 < 0 || !v.unfragmented) return true;
    let inner = -1, ethernet = true;
    if (v.proto === 17) {
      if (v.dport === VXLAN_PORT) {
        // 8 octets: flags (I = 0x08 says a VNI is present), 24 reserved, VNI, 8 reserved
        if (l4 + 16 <= end && (b[l4 + 8]! & 0x08) !== 0) inner = l4 + 16;
      } else if (v.dport === GENEVE_PORT) {
        // version 0, options length in 4-octet words, then the protocol type of what follows
        if (l4 + 16 <= end && b[l4 + 8]! >>> 6 === 0) {
          const proto = u16(b, l4 + 10);
          const at = l4 + 16 + (b[l4 + 8]! & 0x3f) * 4;
          if (proto === ETH_TEB) inner = at;
          else if (proto === 0x0800 || proto === 0x86dd) { inner = at; ethernet = false; }
        }
      } else return true;
    } else if (v.proto === 47) {
      inner = this.greInner(b, l4, end);
    } else return true;
    if (inner < 0 || inner >= end) return true;
    if (this.tunnels === MAX_TUNNELS) { this.stats.count(R['tunnel-too-deep']); return true; }
    this.tunnels++;
    this.stats.decapsulated++;
    v.vlan = -1;
    this.tags = 0;
    return ethernet ? this.link(b, inner, end, 1) : this.raw(b, inner, end);
  }

  /**
   * Where the Ethernet frame inside a GRE packet starts (RFC 2784; key and sequence number, RFC 2890),
   * for protocol types that carry one: transparent Ethernet bridging, ERSPAN type I (no header), II
   * (8 octets) and III (12 octets, 8 more with the platform-specific subheader, frame type 0 only);
   * -1 otherwise. The ERSPAN layouts are from memory of the published ERSPAN drafts.
   */
  private greInner(b: Uint8Array, p: number, end: number): number {
    if (p + 4 > end) return -1;
    const flags = u16(b, p), proto = u16(b, p + 2);
    // version 0 only; routing present (RFC 1701) is not followed
    if ((flags & 0x0007) !== 0 || (flags & 0x4000) !== 0) return -1;
    let q = p + 4;
    if (flags & 0x8000) q += 4; // checksum + reserved
    if (flags & 0x2000) q += 4; // key
    const seq = (flags & 0x1000) !== 0;
    if (seq) q += 4;
    if (proto === ETH_TEB) return q;
    if (proto === ERSPAN_2) return seq ? q + 8 : q;
    if (proto === ERSPAN_3) {
      if (q + 12 > end) return -1;
      if (((b[q + 10]! >>> 2) & 0x1f) !== 0) return -1; // frame type: 0 = Ethernet
      return q + 12 + ((b[q + 11]! & 1) !== 0 ? 8 : 0);
    }
    return -1;
  }

  private skip(reason: number): boolean {
    this.stats.count(reason);
    return false;
  }

  private raw(b: Uint8Array, p: number, end: number): boolean {
    if (p >= end) return this.skip(R['truncated-ipv4']);
    const ver = b[p]! >>> 4;
    if (ver === 4) return this.inet4(b, p, end);
    if (ver === 6) return this.inet6(b, p, end);
    return this.skip(R['bad-ip-version']);
  }

  /** BSD AF_ values: 2 = IPv4; 24, 28, 30 = IPv6 on the BSDs and macOS (METHODS.md 1.3). */
  private addressFamily(b: Uint8Array, p: number, end: number, fam: number): boolean {
    if (fam === 2) return this.inet4(b, p, end);
    if (fam === 24 || fam === 28 || fam === 30) return this.inet6(b, p, end);
    return this.skip(R['null-unknown-family']);
  }

  /** SLL protocol type: an EtherType, or 4 for 802.2 LLC frames (Linux ETH_P_802_2). */
  private sllProtocol(b: Uint8Array, p: number, end: number, proto: number): boolean {
    if (proto >= 0x0600) return this.etherType(b, p, end, proto);
    if (proto === 4) return this.llc(b, p, end);
    return this.skip(R['non-ip']);
  }

  /** Ethernet Type/Length: <= 1500 is an 802.3 length, >= 1536 an EtherType (METHODS.md 2.1). */
  private typeOrLength(b: Uint8Array, p: number, end: number, t: number): boolean {
    if (t <= 1500) return this.llc(b, p, end);
    if (t < 0x0600) return this.skip(R['bad-ethertype']);
    return this.etherType(b, p, end, t);
  }

  /** 802.2 LLC; only SNAP (AA AA 03, OUI, EtherType) can carry IP here. */
  private llc(b: Uint8Array, p: number, end: number): boolean {
    if (p + 3 > end) return this.skip(R['truncated-llc']);
    if (b[p] !== 0xaa || b[p + 1] !== 0xaa || b[p + 2] !== 0x03) return this.skip(R['llc-not-snap']);
    if (p + 8 > end) return this.skip(R['truncated-llc']);
    return this.etherType(b, p + 8, end, u16(b, p + 6));
  }

  private etherType(b: Uint8Array, p: number, end: number, t: number): boolean {
    switch (t) {
      case 0x0800: return this.inet4(b, p, end);
      case 0x86dd: return this.inet6(b, p, end);
      case 0x8100: case 0x88a8: case 0x9100: // 802.1Q C-tag, 802.1ad S-tag, pre-standard QinQ
        if (++this.tags > MAX_VLAN_TAGS) return this.skip(R['vlan-too-deep']);
        if (p + 4 > end) return this.skip(R['truncated-vlan']);
        if (this.view.vlan < 0) this.view.vlan = u16(b, p) & 0x0fff;
        return this.typeOrLength(b, p + 4, end, u16(b, p + 2));
      case 0x8847: case 0x8848: return this.mpls(b, p, end); // MPLS unicast, multicast
      case 0x8864: // PPPoE session stage (RFC 2516 section 4): ver/type, code, session id, length, then PPP
        if (p + 6 > end) return this.skip(R['truncated-pppoe']);
        return this.ppp(b, p + 6, end);
      case 0x0806: return this.skip(R['arp']);
      default: return this.skip(R['non-ip']);
    }
  }

  /**
   * MPLS label stack (RFC 3032 section 2.1): 4-octet entries, the bottom one with S set; what follows
   * carries no type, so IPv4 or IPv6 is told by the version nibble (anything else, a pseudowire, is
   * counted and skipped).
   */
  private mpls(b: Uint8Array, p: number, end: number): boolean {
    for (let n = 0; ; n++) {
      if (n === MAX_MPLS_LABELS) return this.skip(R['mpls-too-deep']);
      if (p + 4 > end) return this.skip(R['truncated-mpls']);
      const bottom = (b[p + 2]! & 1) === 1;
      p += 4;
      if (bottom) break;
    }
    if (p >= end) return this.skip(R['truncated-mpls']);
    const ver = b[p]! >>> 4;
    if (ver === 4) return this.inet4(b, p, end);
    if (ver === 6) return this.inet6(b, p, end);
    return this.skip(R['mpls-non-ip']);
  }

  /**
   * PPP protocol field (RFC 1661 section 2; one octet when compressed, section 6.5: an odd first octet):
   * 0x0021 IPv4, 0x0057 IPv6 (RFC 5072); control protocols and the rest are counted and skipped.
   */
  private ppp(b: Uint8Array, p: number, end: number): boolean {
    if (p >= end) return this.skip(R['truncated-ppp']);
    let proto: number;
    if ((b[p]! & 1) === 1) { proto = b[p]!; p += 1; }
    else {
      if (p + 2 > end) return this.skip(R['truncated-ppp']);
      proto = u16(b, p);
      p += 2;
    }
    if (proto === 0x21) return this.inet4(b, p, end);
    if (proto === 0x57) return this.inet6(b, p, end);
    return this.skip(R['ppp-non-ip']);
  }
}
