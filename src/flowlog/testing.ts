/**
 * Test-only helpers: an in-memory ByteSource and a small IPFIX message builder (layouts: RFC 7011
 * section 3; METHODS.md 3.2). Not used by the readers themselves.
 */
import type { FlowRecord } from '../flow/record.js';
import type { ByteSource } from '../ingest/source.js';
import { DEFAULT_INGEST, type IngestSummary, type Ingestor } from '../ingest/types.js';
import type { InputProblem } from '../util/problem.js';

/** Serves `data` in chunks of `chunk` bytes (to exercise records straddling reads). */
export function memorySource(data: Uint8Array, chunk = 1 << 20, name = 'mem.bin'): ByteSource {
  let pos = 0;
  return {
    name, size: data.length,
    consumed: () => pos,
    read: async () => {
      if (pos >= data.length) return null;
      const c = data.slice(pos, Math.min(data.length, pos + chunk));
      pos += c.length;
      return c;
    },
    close: async () => {},
  };
}

export async function runIngest(fn: Ingestor, data: Uint8Array, chunk?: number, name?: string):
Promise<{ recs: FlowRecord[]; problems: InputProblem[]; summary: IngestSummary }> {
  const recs: FlowRecord[] = [];
  const problems: InputProblem[] = [];
  const summary = await fn(memorySource(data, chunk, name), (r) => recs.push(r), { ...DEFAULT_INGEST, onProblem: (p) => problems.push(p) });
  return { recs, problems, summary };
}

/** Big-endian byte writer. */
export class Wire {
  private b: number[] = [];
  u8(v: number): this { this.b.push(v & 0xff); return this; }
  u16(v: number): this { return this.u8(v >>> 8).u8(v); }
  u32(v: number): this { return this.u16(v >>> 16).u16(v & 0xffff); }
  u64(v: number): this { return this.u32(Math.floor(v / 2 ** 32)).u32(v >>> 0); }
  ip4(s: string): this { for (const p of s.split('.')) this.u8(Number(p)); return this; }
  raw(x: ArrayLike<number>): this { for (let i = 0; i < x.length; i++) this.b.push(x[i]!); return this; }
  get length(): number { return this.b.length; }
  bytes(): Uint8Array { return Uint8Array.from(this.b); }
}

/** IPFIX message: 16-octet header (RFC 7011 section 3.1) around already-built sets. */
export function ipfixMessage(odid: number, seq: number, exportSec: number, ...sets: Uint8Array[]): Uint8Array {
  const len = 16 + sets.reduce((a, s) => a + s.length, 0);
  const w = new Wire().u16(10).u16(len).u32(exportSec).u32(seq).u32(odid);
  for (const s of sets) w.raw(s);
  return w.bytes();
}

/** A set (RFC 7011 section 3.3.2): id, length, body. */
export function ipfixSet(id: number, body: Uint8Array): Uint8Array {
  return new Wire().u16(id).u16(4 + body.length).raw(body).bytes();
}

/** A Template Record (RFC 7011 section 3.4.1) from [ie, length] or [ie, length, pen]. */
export function templateRecord(id: number, fields: readonly (readonly number[])[]): Uint8Array {
  const w = new Wire().u16(id).u16(fields.length);
  for (const [ie, len, pen] of fields) {
    if (pen) w.u16(ie! | 0x8000).u16(len!).u32(pen);
    else w.u16(ie!).u16(len!);
  }
  return w.bytes();
}

export function concat(...parts: Uint8Array[]): Uint8Array {
  const out = new Uint8Array(parts.reduce((a, p) => a + p.length, 0));
  let o = 0;
  for (const p of parts) { out.set(p, o); o += p.length; }
  return out;
}
