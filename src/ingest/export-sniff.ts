import { CaptureParser } from '../capture/parser.js';
import { Decoder } from '../decode/decoder.js';

/** Packets at the head of a capture looked at (ours, no source). */
const LOOK_AT = 64;
/** At least this many of them must be export datagrams, and this share of the decoded ones. */
const MIN_EXPORTS = 8;
const MIN_SHARE = 0.8;

/**
 * A UDP payload that starts like a flow-export message: IPFIX (version 10, length >= 16, RFC 7011
 * section 3.1), NetFlow v9 (version 9, RFC 3954 section 5.1) or v5 (version 5, 1..30 records), sent to
 * or from a collector port (4739 IPFIX, IANA; 2055, 9995, 9996 NetFlow: common practice, no source).
 */
export function isExportDatagram(b: Uint8Array, l4: number, limit: number, sport: number, dport: number): boolean {
  if (!isExportPort(dport) && !isExportPort(sport)) return false;
  const p = l4 + 8;
  if (l4 < 0 || p + 4 > limit || b[p] !== 0) return false;
  const n = (b[p + 2]! << 8) | b[p + 3]!;
  return b[p + 1] === 9 || (b[p + 1] === 10 && n >= 16) || (b[p + 1] === 5 && n >= 1 && n <= 30);
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
