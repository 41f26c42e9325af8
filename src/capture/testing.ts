/**
 * Test-only builders for small pcap and pcapng files in either byte order (layouts: METHODS.md 1.1, 1.2).
 * Not used by the reader itself.
 */
import type { InputProblem } from '../util/problem.js';
import { CaptureParser } from './parser.js';
import type { CaptureSummary, PacketSink } from './types.js';

class Bytes {
  private parts: number[] = [];
  constructor(private le: boolean) {}
  u8(v: number): this { this.parts.push(v & 0xff); return this; }
  u16(v: number): this {
    return this.le ? this.u8(v).u8(v >>> 8) : this.u8(v >>> 8).u8(v);
  }
  u32(v: number): this {
    return this.le ? this.u16(v & 0xffff).u16(v >>> 16) : this.u16(v >>> 16).u16(v & 0xffff);
  }
  u64(v: bigint): this {
    const hi = Number((v >> 32n) & 0xffffffffn);
    const lo = Number(v & 0xffffffffn);
    return this.le ? this.u32(lo).u32(hi) : this.u32(hi).u32(lo);
  }
  raw(b: ArrayLike<number>): this { for (let i = 0; i < b.length; i++) this.parts.push(b[i]!); return this; }
  pad4(): this { while (this.parts.length % 4 !== 0) this.parts.push(0); return this; }
  get length(): number { return this.parts.length; }
  bytes(): Uint8Array { return Uint8Array.from(this.parts); }
}

export interface PcapPacket {
  sec: number;
  /** Microseconds or nanoseconds, per the file's magic. */
  sub: number;
  data: Uint8Array;
  /** Original length on the wire (default: data length). */
  origLen?: number;
  /** Captured length written in the header (default: data length), to build bad records. */
  capLen?: number;
}

export interface PcapOptions {
  le?: boolean;
  nano?: boolean;
  snaplen?: number;
  /** The whole LinkType word, FCS bits included. */
  linkType?: number;
  major?: number;
  minor?: number;
}

export function buildPcap(opts: PcapOptions, packets: readonly PcapPacket[]): Uint8Array {
  const le = opts.le ?? true;
  const w = new Bytes(le);
  w.u32(opts.nano ? 0xa1b23c4d : 0xa1b2c3d4).u16(opts.major ?? 2).u16(opts.minor ?? 4).u32(0).u32(0)
    .u32(opts.snaplen ?? 65535).u32(opts.linkType ?? 1);
  for (const p of packets) {
    w.u32(p.sec).u32(p.sub).u32(p.capLen ?? p.data.length).u32(p.origLen ?? p.data.length).raw(p.data);
  }
  return w.bytes();
}

export interface IdbOptions {
  linkType?: number;
  snaplen?: number;
  tsresol?: number;
  tsoffset?: bigint;
}

/** Builds pcapng block by block; `shb()` starts a section in the given byte order. */
export class PcapngBuilder {
  private out: number[] = [];
  private le = true;

  shb(opts: { le?: boolean; major?: number } = {}): this {
    this.le = opts.le ?? true;
    const body = new Bytes(this.le).u32(0x1a2b3c4d).u16(opts.major ?? 1).u16(0).u64(-1n & 0xffffffffffffffffn);
    return this.block(0x0a0d0d0a, body.bytes());
  }

  idb(opts: IdbOptions = {}): this {
    const b = new Bytes(this.le).u16(opts.linkType ?? 1).u16(0).u32(opts.snaplen ?? 0);
    if (opts.tsresol !== undefined) this.option(b, 9, [opts.tsresol]);
    if (opts.tsoffset !== undefined) this.option(b, 14, new Bytes(this.le).u64(BigInt.asUintN(64, opts.tsoffset)).bytes());
    if (opts.tsresol !== undefined || opts.tsoffset !== undefined) b.u32(0); // opt_endofopt
    return this.block(1, b.bytes());
  }

  epb(ifId: number, ticks: bigint, data: Uint8Array, origLen = data.length, capLen = data.length): this {
    const b = new Bytes(this.le).u32(ifId).u32(Number(ticks >> 32n)).u32(Number(ticks & 0xffffffffn))
      .u32(capLen).u32(origLen).raw(data).pad4();
    return this.block(6, b.bytes());
  }

  /** Obsolete Packet Block (type 2). */
  pb(ifId: number, ticks: bigint, data: Uint8Array, origLen = data.length): this {
    const b = new Bytes(this.le).u16(ifId).u16(0).u32(Number(ticks >> 32n)).u32(Number(ticks & 0xffffffffn))
      .u32(data.length).u32(origLen).raw(data).pad4();
    return this.block(2, b.bytes());
  }

  spb(data: Uint8Array, origLen = data.length): this {
    return this.block(3, new Bytes(this.le).u32(origLen).raw(data).pad4().bytes());
  }

  isb(ifId: number, counters: { ifdrop?: bigint; osdrop?: bigint }): this {
    const b = new Bytes(this.le).u32(ifId).u32(0).u32(0);
    if (counters.ifdrop !== undefined) this.option(b, 5, new Bytes(this.le).u64(counters.ifdrop).bytes());
    if (counters.osdrop !== undefined) this.option(b, 7, new Bytes(this.le).u64(counters.osdrop).bytes());
    b.u32(0);
    return this.block(5, b.bytes());
  }

  /** Any block: body padded to 32 bits, total length before and after. */
  block(type: number, body: Uint8Array): this {
    const padded = (body.length + 3) & ~3;
    const total = 12 + padded;
    const w = new Bytes(this.le).u32(type).u32(total).raw(body).pad4().u32(total);
    for (const x of w.bytes()) this.out.push(x);
    return this;
  }

  bytes(): Uint8Array {
    return Uint8Array.from(this.out);
  }

  private option(b: Bytes, code: number, value: ArrayLike<number>): void {
    b.u16(code).u16(value.length).raw(value).pad4();
  }
}

/** One delivered packet, copied out of the reader's buffer, for comparisons in tests. */
export interface SeenPacket {
  sec: number;
  ns: number;
  capLen: number;
  origLen: number;
  linkType: number;
  fileOff: number;
  data: number[];
}

/** A PacketSink that copies every packet into `into`. */
export function collect(into: SeenPacket[]): PacketSink {
  return (buf: Uint8Array, off: number, capLen: number, origLen: number, sec: number, ns: number, linkType: number, fileOff: number): void => {
    into.push({ sec, ns, capLen, origLen, linkType, fileOff, data: Array.from(buf.subarray(off, off + capLen)) });
  };
}

/** Deterministic filler bytes for packet payloads. */
export function frame(len: number, seed = 1): Uint8Array {
  const b = new Uint8Array(len);
  for (let i = 0; i < len; i++) b[i] = (i * 31 + seed * 17) & 0xff;
  return b;
}

/**
 * Feeds `file` to a CaptureParser in chunks of `chunk` octets (or the sizes `chunk()` returns), through one
 * reused buffer, so a reader that kept a reference past the call would see overwritten bytes.
 */
export function parseInChunks(file: Uint8Array, chunk: number | (() => number)): { packets: SeenPacket[]; summary: CaptureSummary; problems: InputProblem[] } {
  const packets: SeenPacket[] = [];
  const problems: InputProblem[] = [];
  const parser = new CaptureParser('test.cap', collect(packets), (p) => problems.push(p));
  const scratch = new Uint8Array(file.length + 1);
  let pos = 0;
  while (pos < file.length) {
    const want = typeof chunk === 'number' ? chunk : chunk();
    const n = Math.max(1, Math.min(want, file.length - pos));
    scratch.set(file.subarray(pos, pos + n), 0);
    const ok = parser.push(scratch.subarray(0, n));
    scratch.fill(0xee, 0, n);
    pos += n;
    if (!ok) break;
  }
  return { packets, summary: parser.end(), problems };
}
