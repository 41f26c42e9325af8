import { u16 } from './bytes.js';
import { R } from './stats.js';

/** Protocols whose first four octets are source and destination port. */
export function hasPorts(proto: number): boolean {
  // TCP 6, UDP 17, SCTP 132, UDP-Lite 136 (IANA protocol numbers, METHODS.md 2.6)
  return proto === 6 || proto === 17 || proto === 132 || proto === 136;
}

export function isIcmp(proto: number): boolean {
  return proto === 1 || proto === 58;
}

/** A whole TCP header without options (RFC 9293 section 3.1). */
export const TCP_HEADER = 20;

/**
 * Minimum transport octets needed to fill the view: TCP through the data offset and flags octet
 * (octets 12 and 13, RFC 9293 section 3.1; window, checksum and urgent pointer are not read), so a
 * capture cut at 68 octets still gives IPv6 TCP its ports and flags; UDP its 8-octet header (RFC 768),
 * ICMP type/code/checksum.
 */
export function minTransport(proto: number): number {
  switch (proto) {
    case 6: return 14;
    case 17: case 136: return 8;
    case 132: return 4;
    case 1: case 58: return 4;
    default: return 0;
  }
}

/** Reason index for a transport header cut short. */
export function truncatedReason(proto: number): number {
  return proto === 6 ? R['truncated-tcp'] : isIcmp(proto) ? R['truncated-icmp'] : R['truncated-udp'];
}

/** TCP data offset check (RFC 9293: 5..15 words); true when valid. */
export function tcpOffsetOk(b: Uint8Array, l4: number): boolean {
  return b[l4 + 12]! >>> 4 >= 5;
}

export function sourcePort(b: Uint8Array, l4: number): number {
  return u16(b, l4);
}

export function destPort(b: Uint8Array, l4: number): number {
  return u16(b, l4 + 2);
}
