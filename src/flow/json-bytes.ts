import { flowToJson } from './format.js';
import type { FlowRecord } from './record.js';

/** Room for a line's keys and numbers (nine numbers of at most 24 characters plus about 200 of keys). */
const LINE_FIXED = 512;

/**
 * Writes FlowRecords as JSON lines straight into a byte buffer: the same text as `flowToJson` plus a
 * newline (the tests hold the two equal), without building a string per record. This is the output
 * hot path of `tidewatch flows`; anything unusual (a string that needs escaping, a number outside the
 * fast cases) is written through `flowToJson`'s own rules.
 */
export class JsonLineEncoder {
  // a plain Uint8Array (not a Buffer) so every store in the hot loops sees one array type
  private buf: Uint8Array;
  private dv: DataView;
  private pos = 0;

  constructor(private readonly chunkBytes = 1 << 20) {
    this.buf = new Uint8Array(chunkBytes);
    this.dv = new DataView(this.buf.buffer);
  }

  get length(): number {
    return this.pos;
  }

  /** The bytes written so far (a new buffer takes their place; the returned one is the caller's). */
  take(): Buffer {
    const out = Buffer.from(this.buf.buffer, this.buf.byteOffset, this.pos);
    this.buf = new Uint8Array(this.chunkBytes);
    this.dv = new DataView(this.buf.buffer);
    this.pos = 0;
    return out;
  }

  write(r: FlowRecord): void {
    // plain strings are one octet per character
    const need = LINE_FIXED + r.src.length + r.dst.length + r.outcome.length + r.exporter.length;
    if (this.pos + need > this.buf.length) this.growFor(need);
    const b = this.buf, v = this.dv;
    let p = this.pos;
    p = key(b, v, p, K_START); p = num(b, p, r.start);
    p = key(b, v, p, K_END); p = num(b, p, r.end);
    p = key(b, v, p, K_PROTO); p = int(b, p, r.proto);
    p = key(b, v, p, K_SRC); p = plain(b, p, r.src);
    if (p < 0) return this.writeEscaped(r);
    p = key(b, v, p, K_DST); p = plain(b, p, r.dst);
    if (p < 0) return this.writeEscaped(r);
    p = key(b, v, p, K_SPORT); p = int(b, p, r.sport);
    p = key(b, v, p, K_DPORT); p = int(b, p, r.dport);
    p = key(b, v, p, K_PKTS); p = num(b, p, r.pkts);
    p = key(b, v, p, K_BYTES); p = num(b, p, r.bytes);
    p = key(b, v, p, K_RPKTS); p = num(b, p, r.rpkts);
    p = key(b, v, p, K_RBYTES); p = num(b, p, r.rbytes);
    p = key(b, v, p, K_FLAGS); p = int(b, p, r.flags);
    p = key(b, v, p, K_RFLAGS); p = int(b, p, r.rflags);
    p = key(b, v, p, K_OUTCOME); p = ascii(b, p, r.outcome);
    p = key(b, v, p, K_EXPORTER); p = plain(b, p, r.exporter);
    if (p < 0) return this.writeEscaped(r);
    b[p++] = 0x22;
    if (r.vlan !== undefined) { p = key(b, v, p, K_VLAN); p = int(b, p, r.vlan); }
    b[p++] = 0x7d;
    b[p++] = 0x0a;
    this.pos = p;
  }

  /** A line with a string that needs escaping (never from captures): through `flowToJson`'s rules. */
  private writeEscaped(r: FlowRecord): void {
    const line = Buffer.from(`${flowToJson(r)}\n`, 'utf8');
    if (this.pos + line.length > this.buf.length) this.growFor(line.length);
    this.buf.set(line, this.pos);
    this.pos += line.length;
  }

  private growFor(n: number): void {
    const next = new Uint8Array(Math.max(this.buf.length * 2, this.pos + n));
    next.set(this.buf.subarray(0, this.pos));
    this.buf = next;
    this.dv = new DataView(next.buffer);
  }
}

/** A constant key text as little-endian 32-bit words plus the odd tail octets: copied four at a time. */
interface Key { words: Uint32Array; tail: Uint8Array; len: number }

function enc(s: string): Key {
  const k = Uint8Array.from(Buffer.from(s, 'latin1'));
  const n = k.length >> 2;
  const words = new Uint32Array(n);
  for (let i = 0; i < n; i++) words[i] = (k[4 * i]! | (k[4 * i + 1]! << 8) | (k[4 * i + 2]! << 16) | (k[4 * i + 3]! << 24)) >>> 0;
  return { words, tail: k.subarray(4 * n), len: k.length };
}

const K_START = enc('{"start":'), K_END = enc(',"end":'), K_PROTO = enc(',"proto":'), K_SRC = enc(',"src":"');
const K_DST = enc('","dst":"'), K_SPORT = enc('","sport":'), K_DPORT = enc(',"dport":'), K_PKTS = enc(',"pkts":');
const K_BYTES = enc(',"bytes":'), K_RPKTS = enc(',"rpkts":'), K_RBYTES = enc(',"rbytes":'), K_FLAGS = enc(',"flags":');
const K_RFLAGS = enc(',"rflags":'), K_OUTCOME = enc(',"outcome":"'), K_EXPORTER = enc('","exporter":"'), K_VLAN = enc(',"vlan":');

function key(b: Uint8Array, v: DataView, p: number, k: Key): number {
  const w = k.words, t = k.tail;
  for (let i = 0; i < w.length; i++) v.setUint32(p + 4 * i, w[i]!, true);
  const q = p + 4 * w.length;
  for (let i = 0; i < t.length; i++) b[q + i] = t[i]!;
  return p + k.len;
}

function ascii(b: Uint8Array, p: number, s: string): number {
  for (let i = 0; i < s.length; i++) b[p + i] = s.charCodeAt(i);
  return p + s.length;
}

/** Shortest round-trip digits, as `num` in format.ts: integers and up to three decimals directly. */
function num(b: Uint8Array, p: number, x: number): number {
  // counters: small non-negative integers (-0 prints as 0 on both paths)
  if (x >= 0 && x <= 999_999_999 && (x | 0) === x) return int(b, p, x);
  if (x >= 0 && x < 9e12) {
    const m = Math.round(x * 1000);
    if (m / 1000 === x) {
      const whole = Math.floor(m / 1000);
      let frac = (m - whole * 1000) | 0;
      p = int(b, p, whole);
      if (frac === 0) return p;
      b[p++] = 0x2e; // '.'
      const d1 = (frac / 100) | 0;
      b[p++] = 0x30 + d1;
      frac -= d1 * 100;
      if (frac === 0) return p;
      const d2 = (frac / 10) | 0;
      b[p++] = 0x30 + d2;
      frac -= d2 * 10;
      if (frac === 0) return p;
      b[p++] = 0x30 + frac;
      return p;
    }
  }
  return ascii(b, p, x - x === 0 ? `${x}` : 'null');
}

/**
 * A non-negative integer below 2^53: below 10^9 on 32-bit integer arithmetic (divisions by 10 become
 * multiplications), bigger ones as a high part and nine zero-padded digits.
 */
function int(b: Uint8Array, p: number, n: number): number {
  if (n > 999_999_999) {
    const hi = Math.floor(n / 1e9);
    p = int(b, p, hi);
    return pad9(b, p, (n - hi * 1e9) | 0);
  }
  let t = n | 0;
  if (t < 10) { b[p] = 0x30 + t; return p + 1; }
  const len = t < 100 ? 2 : t < 1000 ? 3 : t < 10000 ? 4 : t < 100000 ? 5 : t < 1000000 ? 6 : t < 10000000 ? 7 : t < 100000000 ? 8 : 9;
  for (let i = p + len - 1; i >= p; i--) {
    const q = (t / 10) | 0;
    b[i] = 0x30 + t - q * 10;
    t = q;
  }
  return p + len;
}

/** Exactly nine digits, zero-padded (the low part of a big integer). */
function pad9(b: Uint8Array, p: number, n: number): number {
  let t = n | 0;
  for (let i = p + 8; i >= p; i--) {
    const q = (t / 10) | 0;
    b[i] = 0x30 + t - q * 10;
    t = q;
  }
  return p + 9;
}

/**
 * Writes `s` when it is printable ASCII without `"` or `\\` (as is inside JSON quotes, RFC 8259
 * section 7) and returns the position after it; -1 as soon as a character needs more (nothing the
 * caller keeps was written: the line is redone from its start).
 */
function plain(b: Uint8Array, p: number, s: string): number {
  for (let i = 0; i < s.length; i++) {
    const c = s.charCodeAt(i);
    if (c < 0x20 || c > 0x7e || c === 0x22 || c === 0x5c) return -1;
    b[p + i] = c;
  }
  return p + s.length;
}
