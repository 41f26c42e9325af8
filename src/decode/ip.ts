import { isV4Mapped, readV6, u16, u32 } from './bytes.js';
import { FragmentTable } from './fragments.js';
import { Ipv6Chain } from './ipv6-chain.js';
import { R, type DecodeStats } from './stats.js';
import { TCP_HEADER, destPort, hasPorts, isIcmp, minTransport, sourcePort, tcpOffsetOk, truncatedReason } from './transport.js';
import { Fragment, type PacketView } from './view.js';

/**
 * The IP layer and what follows it: IPv4 (RFC 791), IPv6 with its extension chain (RFC 8200), the
 * transport ports and flags, ICMP and ICMPv6 with the quoted datagram of error messages (RFC 792,
 * RFC 4443), and fragments tied to their first fragment. Fills the decoder's view; returns false after
 * counting the reason when the packet is skipped.
 */
export class IpLayer {
  private readonly chain = new Ipv6Chain();
  private readonly quoteChain = new Ipv6Chain();
  private readonly frags = new FragmentTable();
  // IPv4 addresses as fragment-table keys: word 0 is the address, the rest stay 0
  private readonly keySrc4 = new Uint32Array(4);
  private readonly keyDst4 = new Uint32Array(4);

  constructor(private readonly v: PacketView, private readonly s: DecodeStats) {}

  ipv4(b: Uint8Array, p: number, capEnd: number): boolean {
    if (p + 20 > capEnd) return this.skip(p + 1 > capEnd || b[p]! >>> 4 === 4 ? R['truncated-ipv4'] : R['bad-ip-version']);
    const vihl = b[p]!;
    if (vihl >>> 4 !== 4) return this.skip(R['bad-ip-version']);
    const hl = (vihl & 15) * 4;
    if (hl < 20) return this.skip(R['bad-ihl']);
    if (p + hl > capEnd) return this.skip(R['truncated-ipv4']);
    let total = u16(b, p + 2);
    // 0 is what segmentation offload leaves in captures: count what was captured (common practice, no source)
    if (total === 0) total = capEnd - p;
    else if (total < hl) return this.skip(R['bad-ipv4-length']);
    const v = this.v;
    v.family = 4;
    v.proto = b[p + 9]!;
    v.src4 = u32(b, p + 12);
    v.dst4 = u32(b, p + 16);
    v.ipBytes = total;
    const ipEnd = p + total;
    const limit = ipEnd < capEnd ? ipEnd : capEnd;
    const fw = u16(b, p + 6);
    const id = u16(b, p + 4);
    if ((fw & 0x1fff) !== 0) {
      this.keySrc4[0] = v.src4;
      this.keyDst4[0] = v.dst4;
      return this.laterFragment(4, id, this.keySrc4, this.keyDst4);
    }
    return this.transport(b, p + hl, limit, ipEnd <= capEnd, (fw & 0x2000) !== 0, 4, id);
  }

  ipv6(b: Uint8Array, p: number, capEnd: number): boolean {
    if (p + 40 > capEnd) return this.skip(p + 1 > capEnd || b[p]! >>> 4 === 6 ? R['truncated-ipv6'] : R['bad-ip-version']);
    if (b[p]! >>> 4 !== 6) return this.skip(R['bad-ip-version']);
    const v = this.v;
    const plen = u16(b, p + 4);
    // payload length 0: a jumbogram (RFC 2675) or offload; count what was captured
    const ipEnd = plen === 0 ? capEnd : p + 40 + plen;
    const limit = ipEnd < capEnd ? ipEnd : capEnd;
    const chain = this.chain;
    const r = chain.walk(b, p + 40, b[p + 6]!, limit);
    if (r >= 0) return this.skip(r);
    v.family = 6;
    v.proto = chain.proto;
    v.ipBytes = ipEnd - p;
    readV6(b, p + 8, v.src6);
    readV6(b, p + 24, v.dst6);
    if (isV4Mapped(v.src6) && isV4Mapped(v.dst6)) {
      v.family = 4;
      v.src4 = v.src6[3]!;
      v.dst4 = v.dst6[3]!;
    }
    if (chain.fragmented && chain.fragOffset !== 0) return this.laterFragment(6, chain.fragId, v.src6, v.dst6);
    return this.transport(b, chain.l4, limit, ipEnd <= capEnd, chain.fragmented && chain.fragMore, 6, chain.fragId);
  }

  private skip(reason: number): boolean {
    this.s.count(reason);
    return false;
  }

  /**
   * Transport header at `l4`, readable up to `limit`. `whole` says the datagram was captured to its end,
   * so a short header is the datagram's own (a tiny first fragment) and not the snap length.
   */
  private transport(b: Uint8Array, l4: number, limit: number, whole: boolean, firstFragment: boolean, keyFamily: 4 | 6, id: number): boolean {
    this.v.clearTransport();
    const v = this.v;
    v.l4Offset = l4;
    v.l4Limit = limit;
    v.unfragmented = !firstFragment;
    const proto = v.proto;
    const need = minTransport(proto);
    if (need > 0) {
      if (l4 + need > limit) {
        if (!(firstFragment && whole)) return this.skip(truncatedReason(proto));
        // the transport header itself is split across fragments: an evasion signal (METHODS.md 2.2)
        this.s.count(R['tiny-first-fragment']);
        if (hasPorts(proto) && l4 + 4 <= limit) { v.sport = sourcePort(b, l4); v.dport = destPort(b, l4); }
      } else if (hasPorts(proto)) {
        if (proto === 6) {
          if (l4 + TCP_HEADER > limit) {
            // under 20 octets of TCP: a snap length cut past the flags is fine; a datagram that itself
            // ends there is malformed, or, as a first fragment, the tiny-fragment evasion (RFC 1858)
            if (whole && !firstFragment) return this.skip(R['truncated-tcp']);
            if (whole) this.s.count(R['tiny-first-fragment']);
          }
          if (!tcpOffsetOk(b, l4)) return this.skip(R['bad-tcp-offset']);
          v.tcpFlags = b[l4 + 13]!;
        }
        v.sport = sourcePort(b, l4);
        v.dport = destPort(b, l4);
      } else {
        this.icmp(b, l4, limit);
      }
    }
    if (firstFragment) {
      if (keyFamily === 4) { this.keySrc4[0] = v.src4; this.keyDst4[0] = v.dst4; }
      const src = keyFamily === 4 ? this.keySrc4 : v.src6;
      const dst = keyFamily === 4 ? this.keyDst4 : v.dst6;
      this.frags.remember(keyFamily, proto, id, src, dst, v.sport, v.dport);
    }
    return true;
  }

  /** A fragment with offset != 0: no transport header; ports come from the first fragment if seen. */
  private laterFragment(keyFamily: 4 | 6, id: number, src: Uint32Array, dst: Uint32Array): boolean {
    this.v.clearTransport();
    const v = this.v;
    const ports = this.frags.lookup(keyFamily, v.proto, id, src, dst);
    if (ports < 0) {
      v.fragment = Fragment.Unmatched;
      this.s.count(R['unmatched-fragment']);
    } else {
      v.fragment = Fragment.Matched;
      v.sport = ports >>> 16;
      v.dport = ports & 0xffff;
    }
    return true;
  }

  /** ICMP/ICMPv6 type and code; for error messages the quoted original tuple. */
  private icmp(b: Uint8Array, l4: number, limit: number): void {
    const v = this.v;
    const type = b[l4]!;
    const code = b[l4 + 1]!;
    v.icmpType = type;
    v.icmpCode = code;
    v.sport = 0;
    v.dport = (type << 8) | code;
    if (v.proto === 1) {
      // RFC 792: 3 destination unreachable, 11 time exceeded; code 4 (fragmentation needed) is path MTU
      v.icmpError = type === 3 || type === 11;
      v.icmpUnreachable = type === 3 && code !== 4;
    } else {
      // RFC 4443 section 3: types 1-4 are errors; 1 is destination unreachable
      v.icmpError = type >= 1 && type <= 4;
      v.icmpUnreachable = type === 1;
    }
    // the quote starts after the 8-octet ICMP header (type, code, checksum, 4 unused/MTU/pointer octets)
    if (v.icmpError && !this.quote(b, l4 + 8, limit)) this.s.count(R['truncated-icmp-quote']);
  }

  /** Parses the quoted IP header + first 8 payload octets (RFC 792, RFC 4443 section 2.4 c). */
  private quote(b: Uint8Array, p: number, limit: number): boolean {
    const q = this.v.quoted;
    if (p + 1 > limit) return false;
    const ver = b[p]! >>> 4;
    let l4: number;
    let laterFragment: boolean;
    if (ver === 4) {
      const hl = (b[p]! & 15) * 4;
      if (hl < 20 || p + hl > limit) return false;
      q.family = 4;
      q.proto = b[p + 9]!;
      q.src4 = u32(b, p + 12);
      q.dst4 = u32(b, p + 16);
      l4 = p + hl;
      laterFragment = (u16(b, p + 6) & 0x1fff) !== 0;
    } else if (ver === 6) {
      if (p + 40 > limit) return false;
      const c = this.quoteChain;
      if (c.walk(b, p + 40, b[p + 6]!, limit) >= 0) return false;
      q.family = 6;
      q.proto = c.proto;
      readV6(b, p + 8, q.src6);
      readV6(b, p + 24, q.dst6);
      if (isV4Mapped(q.src6) && isV4Mapped(q.dst6)) { q.family = 4; q.src4 = q.src6[3]!; q.dst4 = q.dst6[3]!; }
      l4 = c.l4;
      laterFragment = c.fragmented && c.fragOffset !== 0;
    } else {
      return false;
    }
    q.sport = 0;
    q.dport = 0;
    if (!laterFragment) {
      if (hasPorts(q.proto)) {
        if (l4 + 4 > limit) return false;
        q.sport = sourcePort(b, l4);
        q.dport = destPort(b, l4);
      } else if (isIcmp(q.proto)) {
        if (l4 + 2 > limit) return false;
        q.dport = (b[l4]! << 8) | b[l4 + 1]!;
      }
    }
    q.valid = true;
    return true;
  }
}
