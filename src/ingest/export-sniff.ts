import { CaptureParser } from '../capture/parser.js';
import { Decoder } from '../decode/decoder.js';

/** Packets at the head of a capture looked at (ours, no source). */
const LOOK_AT = 64;
/** At least this many of them must be export datagrams, and this share of the decoded ones. */
const MIN_EXPORTS = 8;
const MIN_SHARE = 0.8;

/**
 * A UDP datagram that carries a flow-export message. To or from a collector port (4739 IPFIX, IANA;
 * 2055, 9995, 9996 NetFlow: common practice, no source) a plausible version word is enough: IPFIX
 * (version 10, length >= 16, RFC 7011 section 3.1), NetFlow v9 (version 9, RFC 3954 section 5.1) or v5
 * (version 5, 1..30 records). On any other port the message must also fill the datagram exactly: the
 * IPFIX length, v5's 24 + 48 * count octets, or v9's FlowSets walked to the end.
 */
export function isExportDatagram(b: Uint8Array, l4: number, limit: number, sport: number, dport: number): boolean {
  const p = l4 + 8;
  if (l4 < 0 || p + 4 > limit || b[p] !== 0) return false;
  const v = b[p + 1]!, n = (b[p + 2]! << 8) | b[p + 3]!;
  const known = isExportPort(dport) || isExportPort(sport);
  // the datagram's own length (UDP length field), bounded by what was captured
  const udpEnd = l4 + ((b[l4 + 4]! << 8) | b[l4 + 5]!);
  if (v === 10) return n >= 16 && (known || p + n === udpEnd);
  if (v === 5) return n >= 1 && n <= 30 && (known || p + 24 + 48 * n === udpEnd);
  if (v !== 9) return false;
  if (known) return true;
  // v9: a 20-octet header, then FlowSets (id 0, 1 or >= 256; length >= 4) ending exactly at the datagram end
  let q = p + 20;
  if (udpEnd > limit || q > udpEnd) return false;
  while (q + 4 <= udpEnd) {
    const id = (b[q]! << 8) | b[q + 1]!, len = (b[q + 2]! << 8) | b[q + 3]!;
    if (len < 4 || (id > 1 && id < 256)) return false;
    q += len;
  }
  return q === udpEnd;
}

function isExportPort(p: number): boolean {
  return p === 4739 || p === 2055 || p === 9995 || p === 9996;
}

/**
 * Whether a capture's first bytes hold mostly flow-export datagrams (a capture of a router's export
 * traffic): then the flows it carries are what the user wants, not the UDP between exporter and
 * collector. Reads at most the first 64 packets of `head`; never throws.
 */
export function looksLikeExportTraffic(head: Uint8Array): boolean {
  const decoder = new Decoder();
  const v = decoder.view;
  let seen = 0, exports = 0;
  const parser = new CaptureParser('head', (buf, off, capLen, _orig, _s, _ns, linkType) => {
    if (seen >= LOOK_AT) return;
    if (!decoder.decode(buf, off, capLen, linkType)) return;
    seen++;
    if (v.proto === 17 && isExportDatagram(buf, v.l4Offset, v.l4Limit, v.sport, v.dport)) exports++;
  });
  parser.push(head);
  return exports >= MIN_EXPORTS && exports >= MIN_SHARE * seen;
}
