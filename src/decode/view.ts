/** How a packet relates to IP fragmentation. */
export const enum Fragment {
  /** Not fragmented, or the first fragment (offset 0): ports are the packet's own. */
  None = 0,
  /** A later fragment tied to its first fragment: ports were recovered from it. */
  Matched = 1,
  /** A later fragment whose first fragment was not seen: ports are 0 (host-pair flow). */
  Unmatched = 2,
}

/** The 5-tuple an ICMP error quotes (the original datagram's header). */
export class QuotedTuple {
  /** false when the packet is not an ICMP error or the quote could not be parsed. */
  valid = false;
  family: 4 | 6 = 4;
  proto = 0;
  src4 = 0;
  dst4 = 0;
  readonly src6 = new Uint32Array(4);
  readonly dst6 = new Uint32Array(4);
  sport = 0;
  dport = 0;
}

/**
 * One decoded packet. A decoder owns one view and refills it per packet, so nothing is allocated per
 * packet; read it only inside the packet callback. IPv4 addresses are unsigned 32-bit integers; IPv6
 * addresses are four big-endian 32-bit words. IPv4-mapped IPv6 packets are normalised to family 4.
 */
export class PacketView {
  family: 4 | 6 = 4;
  /** IANA protocol number that ends the header chain. */
  proto = 0;
  src4 = 0;
  dst4 = 0;
  readonly src6 = new Uint32Array(4);
  readonly dst6 = new Uint32Array(4);
  /** Ports; for ICMP/ICMPv6 sport = 0 and dport = type * 256 + code (record.ts convention). */
  sport = 0;
  dport = 0;
  /** TCP flag octet (0 for other protocols and for later fragments). */
  tcpFlags = 0;
  /** IP-layer octets: IPv4 total length, IPv6 payload length + 40 (never the captured length). */
  ipBytes = 0;
  /** Outermost 802.1Q/802.1ad VID, -1 when untagged. */
  vlan = -1;
  fragment: Fragment = Fragment.None;
  /** ICMP/ICMPv6 type and code, -1 for other protocols. */
  icmpType = -1;
  icmpCode = -1;
  /** An ICMP error message (v4 types 3, 11; v6 types 1-4): `quoted` holds the original tuple. */
  icmpError = false;
  /** A destination unreachable that means "rejected" (v4 type 3 except code 4; v6 type 1). */
  icmpUnreachable = false;
  readonly quoted = new QuotedTuple();
  /**
   * Where the transport header starts in the decoded buffer, -1 for later fragments; with `l4Limit`
   * (end of the datagram's captured bytes) it lets a reader look at the payload during the callback.
   * `l4Limit` and `unfragmented` are left from an earlier packet when `l4Offset` is -1.
   */
  l4Offset = -1;
  l4Limit = 0;
  /** The datagram came whole, not as the first of several fragments. */
  unfragmented = true;
  /**
   * The packet's time (epoch ms), set by whoever hands the view on: a double field is updated in
   * place, where a double passed as an argument to a call that is not inlined is boxed anew each time.
   */
  tsMs = Number.NaN;

  /** Before a transport header is read: no ports, flags, ICMP meaning, quote or fragment tie yet. */
  clearTransport(): void {
    this.sport = 0;
    this.dport = 0;
    this.tcpFlags = 0;
    this.icmpType = -1;
    this.icmpCode = -1;
    this.icmpError = false;
    this.icmpUnreachable = false;
    this.quoted.valid = false;
    this.fragment = Fragment.None;
    this.l4Offset = -1;
  }
}
