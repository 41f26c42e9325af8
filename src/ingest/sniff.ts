import type { InputFormat } from './types.js';

/**
 * Recognises an input's format from its first bytes (after gunzip). Magic numbers: METHODS.md 1.1, 1.2
 * (pcap, pcapng), 3.9 (IPFIX version 10), 3.8 (NetFlow v9 version 9), NetFlow v5 (version 5, count
 * 1..30); VPC flow logs by their first line (a header of field names, or a default-layout record);
 * other text formats by their first non-blank character. Returns null when nothing matches.
 */
export function sniffFormat(h: Uint8Array): InputFormat | null {
  if (h.length >= 4) {
    const m = ((h[0]! << 24) | (h[1]! << 16) | (h[2]! << 8) | h[3]!) >>> 0;
    if (m === 0xa1b2c3d4 || m === 0xd4c3b2a1 || m === 0xa1b23c4d || m === 0x4d3cb2a1) return 'pcap';
    if (m === 0x0a0d0d0a) return 'pcapng';
  }
  if (h.length >= 4 && h[0] === 0 && h[1] === 10) {
    const len = (h[2]! << 8) | h[3]!;
    if (len >= 16) return 'ipfix';
  }
  if (h.length >= 4 && h[0] === 0 && h[1] === 9) return 'netflow9';
  // NetFlow v5 (Cisco's export format): version 5 and a record count of 1..30
  if (h.length >= 4 && h[0] === 0 && h[1] === 5) {
    const count = (h[2]! << 8) | h[3]!;
    if (count >= 1 && count <= 30) return 'netflow5';
  }
  let i = 0;
  if (h[0] === 0xef && h[1] === 0xbb && h[2] === 0xbf) i = 3; // UTF-8 BOM
  while (i < h.length && (h[i] === 0x20 || h[i] === 0x09 || h[i] === 0x0d || h[i] === 0x0a)) i++;
  if (i < h.length) {
    const c = h[i]!;
    let nl = i;
    while (nl < h.length && h[nl] !== 0x0a) nl++;
    const first = Buffer.from(h.buffer, h.byteOffset + i, nl - i).toString('latin1');
    if (isVpcHeader(first) || isVpcDefaultRecord(first)) return 'vpc-flowlog';
    if (c === 0x7b) return 'jsonl'; // '{'
    if ((c >= 0x41 && c <= 0x5a) || (c >= 0x61 && c <= 0x7a) || c === 0x22 || c === 0x5f) return 'csv';
  }
  return null;
}

/**
 * Cloud VPC flow logs: one record per line, fields separated by spaces, `-` for a field with no value
 * (AWS VPC User Guide, "Flow log records"; other clouds' VPC flow logs use the same field names). A
 * first line of field names gives the layout (as delivered to object storage, custom formats
 * included); without one the default version 2 layout is assumed.
 */
export const DEFAULT_VPC_FIELDS: readonly string[] = [
  'version', 'account-id', 'interface-id', 'srcaddr', 'dstaddr', 'srcport', 'dstport', 'protocol',
  'packets', 'bytes', 'start', 'end', 'action', 'log-status',
];

/** A line naming VPC flow-log fields: no commas, srcaddr and dstaddr among its words. */
export function isVpcHeader(line: string): boolean {
  if (line.includes(',')) return false;
  const words = line.trim().split(/\s+/);
  return words.includes('srcaddr') && words.includes('dstaddr');
}

/** A default-layout (version 2) record: 14 fields, a number first, an action and a log status last. */
export function isVpcDefaultRecord(line: string): boolean {
  const w = line.trim().split(/\s+/);
  return w.length === DEFAULT_VPC_FIELDS.length && /^\d+$/.test(w[0]!)
    && ['ACCEPT', 'REJECT', '-'].includes(w[12]!) && ['OK', 'NODATA', 'SKIPDATA'].includes(w[13]!);
}

/** Compressed and archive formats by their magic numbers (each format's own specification; from memory). */
const PACKED: readonly { name: string; magic: readonly number[] }[] = [
  { name: 'zstd-compressed', magic: [0x28, 0xb5, 0x2f, 0xfd] },
  { name: 'xz-compressed', magic: [0xfd, 0x37, 0x7a, 0x58, 0x5a, 0x00] },
  // "BZh", a block-size digit, then the first block's magic (0x314159265359): letters alone would be a CSV header
  { name: 'bzip2-compressed', magic: [0x42, 0x5a, 0x68, -1, 0x31, 0x41, 0x59, 0x26, 0x53, 0x59] },
  { name: 'lz4-compressed', magic: [0x04, 0x22, 0x4d, 0x18] },
  { name: 'a zip archive', magic: [0x50, 0x4b, 0x03, 0x04] },
  { name: 'a 7z archive', magic: [0x37, 0x7a, 0xbc, 0xaf, 0x27, 0x1c] },
];

/** What an unrecognised input is when its first bytes say it is packed (null otherwise): for the error line. */
export function packedFormat(h: Uint8Array): string | null {
  for (const p of PACKED) if (p.magic.every((m, i) => i < h.length && (m < 0 || h[i] === m))) return p.name;
  return null;
}
