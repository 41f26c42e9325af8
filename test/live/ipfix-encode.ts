/**
 * Test and bench helper: FlowRecords as IPFIX messages (RFC 7011 sections 3.1-3.4), bidirectional
 * with the RFC 5103 reverse elements (PEN 29305), so the collector gives back the same 5-tuples,
 * counts, flags and millisecond times. One template per address family; templates go in the first
 * message and again every `templateEvery` messages, as a UDP exporter refreshes them.
 */
import type { FlowRecord } from '../../src/flow/record.js';
import ipaddr from 'ipaddr.js';

const REVERSE_PEN = 29305;
const TEMPLATE_V4 = 256, TEMPLATE_V6 = 257;
/** [element id, length, enterprise]: tuple, flags, deltas, ms times, reverse deltas and flags. */
const TAIL: [number, number, number][] = [
  [7, 2, 0], [11, 2, 0], [4, 1, 0], [6, 1, 0], [2, 8, 0], [1, 8, 0], [152, 8, 0], [153, 8, 0],
  [2, 8, REVERSE_PEN], [1, 8, REVERSE_PEN], [6, 1, REVERSE_PEN],
];
const FIELDS_V4: [number, number, number][] = [[8, 4, 0], [12, 4, 0], ...TAIL];
const FIELDS_V6: [number, number, number][] = [[27, 16, 0], [28, 16, 0], ...TAIL];
const recordLength = (f: [number, number, number][]) => f.reduce((a, x) => a + x[1], 0);
export const RECORD_V4_BYTES = recordLength(FIELDS_V4);
export const RECORD_V6_BYTES = recordLength(FIELDS_V6);
/** Offsets of flowStartMilliseconds and flowEndMilliseconds inside a record (the bench restamps them). */
export const START_MS_AT = { v4: 4 + 4 + 2 + 2 + 1 + 1 + 8 + 8, v6: 16 + 16 + 2 + 2 + 1 + 1 + 8 + 8 };

function templateSet(): Buffer {
  const rec = (id: number, fields: [number, number, number][]) => {
    const b = Buffer.alloc(4 + fields.reduce((a, f) => a + (f[2] ? 8 : 4), 0));
    b.writeUInt16BE(id, 0); b.writeUInt16BE(fields.length, 2);
    let p = 4;
    for (const [ie, len, pen] of fields) {
      b.writeUInt16BE(pen ? ie | 0x8000 : ie, p); b.writeUInt16BE(len, p + 2); p += 4;
      if (pen) { b.writeUInt32BE(pen, p); p += 4; }
    }
    return b;
  };
  const body = Buffer.concat([rec(TEMPLATE_V4, FIELDS_V4), rec(TEMPLATE_V6, FIELDS_V6)]);
  const head = Buffer.alloc(4);
  head.writeUInt16BE(2, 0); head.writeUInt16BE(4 + body.length, 2);
  return Buffer.concat([head, body]);
}

function writeU64(b: Buffer, p: number, v: number): void {
  const x = Math.max(0, Math.round(v));
  b.writeUInt32BE(Math.floor(x / 2 ** 32), p);
  b.writeUInt32BE(x >>> 0, p + 4);
}

function writeAddr(b: Buffer, p: number, words: Uint32Array, fam: 4 | 6): number {
  const n = fam === 4 ? 1 : 4;
  for (let i = 0; i < n; i++) b.writeUInt32BE(words[i]! >>> 0, p + 4 * i);
  return p + 4 * n;
}

const wordCache = new Map<string, { fam: 4 | 6; words: Uint32Array }>();
function addrWords(s: string): { fam: 4 | 6; words: Uint32Array } {
  let w = wordCache.get(s);
  if (w) return w;
  const bytes = ipaddr.parse(s).toByteArray();
  const words = new Uint32Array(bytes.length / 4);
  for (let i = 0; i < words.length; i++) words[i] = ((bytes[4 * i]! << 24) | (bytes[4 * i + 1]! << 16) | (bytes[4 * i + 2]! << 8) | bytes[4 * i + 3]!) >>> 0;
  w = { fam: bytes.length === 4 ? 4 : 6, words };
  wordCache.set(s, w);
  return w;
}

/** One data record's bytes at `p`; returns the end. */
function writeRecord(b: Buffer, p: number, r: FlowRecord, src: ReturnType<typeof addrWords>, dst: ReturnType<typeof addrWords>): number {
  p = writeAddr(b, p, src.words, src.fam);
  p = writeAddr(b, p, dst.words, dst.fam);
  b.writeUInt16BE(r.sport & 0xffff, p); b.writeUInt16BE(r.dport & 0xffff, p + 2);
  b[p + 4] = r.proto; b[p + 5] = r.flags & 0xff;
  writeU64(b, p + 6, r.pkts); writeU64(b, p + 14, r.bytes);
  writeU64(b, p + 22, r.start); writeU64(b, p + 30, r.end);
  writeU64(b, p + 38, r.rpkts); writeU64(b, p + 46, r.rbytes);
  b[p + 54] = r.rflags & 0xff;
  return p + 55;
}

export interface EncodeOptions {
  /** Observation Domain ID. Default 1. */
  odid?: number;
  /** Message size limit (a UDP exporter keeps to the path MTU). Default 1400. */
  maxBytes?: number;
  /** Templates again every this many messages. Default 64. */
  templateEvery?: number;
}

/**
 * Encodes records in order into IPFIX messages. Sequence numbers count data records sent before each
 * message (RFC 7011 section 3.1); export time is the latest record end in the message, in seconds.
 */
export function encodeIpfix(records: readonly FlowRecord[], opts: EncodeOptions = {}): Buffer[] {
  const odid = opts.odid ?? 1, maxBytes = opts.maxBytes ?? 1400, every = opts.templateEvery ?? 64;
  const tpl = templateSet();
  const out: Buffer[] = [];
  let seq = 0;
  let i = 0;
  while (i < records.length) {
    const b = Buffer.alloc(maxBytes);
    let p = 16;
    if (out.length % every === 0) { tpl.copy(b, p); p += tpl.length; }
    const first = seq;
    let exportMs = 0;
    let setStart = -1, setFam = 0;
    const closeSet = () => { if (setStart >= 0) b.writeUInt16BE(p - setStart, setStart + 2); setStart = -1; };
    while (i < records.length) {
      const r = records[i]!;
      const src = addrWords(r.src), dst = addrWords(r.dst);
      if (src.fam !== dst.fam) { i++; continue; }
      const need = (src.fam === 4 ? RECORD_V4_BYTES : RECORD_V6_BYTES) + (setFam === src.fam ? 0 : 4);
      if (p + need > maxBytes) break;
      if (setFam !== src.fam) {
        closeSet();
        setStart = p; setFam = src.fam;
        b.writeUInt16BE(src.fam === 4 ? TEMPLATE_V4 : TEMPLATE_V6, p);
        p += 4;
      }
      p = writeRecord(b, p, r, src, dst);
      if (r.end > exportMs) exportMs = r.end;
      seq++; i++;
    }
    closeSet();
    b.writeUInt16BE(10, 0); b.writeUInt16BE(p, 2);
    b.writeUInt32BE(Math.floor(exportMs / 1000) >>> 0, 4);
    b.writeUInt32BE(first >>> 0, 8);
    b.writeUInt32BE(odid >>> 0, 12);
    out.push(b.subarray(0, p));
  }
  return out;
}
