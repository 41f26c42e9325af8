import { magicAt, u16, u32 } from './bytes.js';
import type { ReaderContext, UnitReader } from './context.js';
import { InterfaceTable } from './interfaces.js';
import { MAX_CAPTURED, MAX_PARSED_BLOCK } from './limits.js';
import { DEFAULT_TSRESOL, ticksToInstant, ticksToInstantSlow, type Instant } from './timestamp.js';

/** Block types (METHODS.md 1.2, draft-ietf-opsawg-pcapng block type registry). */
export const BLOCK_SHB = 0x0a0d0d0a;
export const BLOCK_IDB = 1;
export const BLOCK_PB = 2;
export const BLOCK_SPB = 3;
export const BLOCK_ISB = 5;
export const BLOCK_EPB = 6;

/** Byte-order magic 0x1A2B3C4D read as a big-endian word: as written by each byte order. */
const BOM_BE = 0x1a2b3c4d;
const BOM_LE = 0x4d3c2b1a;

/** Smallest legal total length per parsed block type: 12 octets of framing plus the fixed body. */
const MIN_SHB = 28;
const MIN_IDB = 20;
const MIN_PACKET = 32; // EPB and obsolete PB
const MIN_SPB = 16;
const MIN_ISB = 24;

const OPT_END = 0;
const IF_TSRESOL = 9;
const IF_TSOFFSET = 14;
const ISB_IFDROP = 5;
const ISB_OSDROP = 7;

function minLength(type: number): number {
  switch (type) {
    case BLOCK_IDB: return MIN_IDB;
    case BLOCK_PB: case BLOCK_EPB: return MIN_PACKET;
    case BLOCK_SPB: return MIN_SPB;
    case BLOCK_ISB: return MIN_ISB;
    default: return 0; // not parsed
  }
}

/**
 * pcapng: a sequence of sections, each an SHB followed by blocks in that section's byte order. Parses
 * IDB, EPB, SPB, obsolete PB and ISB; every other block is skipped by its length.
 */
export class PcapngReader implements UnitReader {
  skippable = false;
  private le = true;
  /** A section with an unsupported major version: walk its blocks by length, read nothing. */
  private sectionSkipped = false;
  private readonly ifs = new InterfaceTable();
  private readonly t: Instant = { sec: 0, ns: 0 };
  /** Set by `option()`: the value length of the option found, and whether the list was malformed. */
  private optLen = 0;
  private optBad = false;

  constructor(private readonly ctx: ReaderContext) {
    ctx.summary.format = 'pcapng';
  }

  headBytes(buf: Uint8Array, off: number, avail: number): number {
    // The SHB's length is in its own byte order, known only from the byte-order magic at offset 8.
    return avail >= 4 && magicAt(buf, off) === BLOCK_SHB ? 12 : 8;
  }

  unitLength(buf: Uint8Array, off: number, fileOff: number): number {
    let le = this.le;
    let type: number;
    if (magicAt(buf, off) === BLOCK_SHB) {
      const bom = magicAt(buf, off + 8);
      if (bom !== BOM_LE && bom !== BOM_BE) {
        this.ctx.problem('bad-byte-order-magic', fileOff, `section header byte-order magic 0x${bom.toString(16).padStart(8, '0')} is neither order of 0x1a2b3c4d`, true);
        return 0;
      }
      le = bom === BOM_LE;
      type = BLOCK_SHB;
    } else {
      type = u32(buf, off, le);
    }
    const len = u32(buf, off + 4, le);
    if (len < 12 || (len & 3) !== 0) {
      this.ctx.problem('bad-block-length', fileOff, `block total length ${len} is ${len < 12 ? 'below 12' : 'not a multiple of 4'}`, true);
      return 0;
    }
    const parsed = type === BLOCK_SHB || (!this.sectionSkipped && minLength(type) > 0);
    if (parsed) {
      const min = type === BLOCK_SHB ? MIN_SHB : minLength(type);
      if (len < min) {
        this.ctx.problem('block-too-short', fileOff, `block type ${type} total length ${len} is below its minimum ${min}`, true);
        return 0;
      }
      if (len > MAX_PARSED_BLOCK) {
        this.ctx.problem('block-too-long', fileOff, `block type ${type} total length ${len} exceeds the ${MAX_PARSED_BLOCK}-octet cap`, true);
        return 0;
      }
    }
    this.skippable = !parsed;
    return len;
  }

  consume(buf: Uint8Array, off: number, len: number, fileOff: number): void {
    const shb = magicAt(buf, off) === BLOCK_SHB;
    const le = shb ? magicAt(buf, off + 8) === BOM_LE : this.le;
    if (!this.trailerMatches(buf, off + len - 4, le, len, fileOff)) return;
    if (shb) {
      this.startSection(buf, off, le, fileOff);
      return;
    }
    if (this.sectionSkipped) return;
    switch (u32(buf, off, le)) {
      case BLOCK_EPB: this.packet(buf, off, len, fileOff, false); break;
      case BLOCK_PB: this.packet(buf, off, len, fileOff, true); break;
      case BLOCK_SPB: this.simplePacket(buf, off, len, fileOff); break;
      case BLOCK_IDB: this.interfaceDescription(buf, off, len, fileOff); break;
      case BLOCK_ISB: this.interfaceStatistics(buf, off, len, fileOff); break;
      default: break; // NRB, DSB, custom, local and unknown blocks: nothing the sensor needs
    }
  }

  skipped(tail: Uint8Array, len: number, fileOff: number): void {
    this.trailerMatches(tail, 0, this.le, len, fileOff);
  }

  private trailerMatches(buf: Uint8Array, at: number, le: boolean, len: number, fileOff: number): boolean {
    const trailing = u32(buf, at, le);
    if (trailing === len) return true;
    this.ctx.problem('block-length-mismatch', fileOff, `block total length ${len} does not match its trailing copy ${trailing}`, true);
    return false;
  }

  private startSection(buf: Uint8Array, off: number, le: boolean, fileOff: number): void {
    this.le = le;
    this.ifs.reset();
    const major = u16(buf, off + 12, le);
    this.sectionSkipped = major !== 1;
    if (this.sectionSkipped) {
      this.ctx.problem('unsupported-section-version', fileOff, `pcapng section version ${major}.${u16(buf, off + 14, le)} is not supported; skipping the section`, false);
    }
  }

  private interfaceDescription(buf: Uint8Array, off: number, len: number, fileOff: number): void {
    const le = this.le;
    const start = off + 16;
    const end = off + len - 4;
    this.optBad = false;
    let tsresol = DEFAULT_TSRESOL;
    let v = this.option(buf, start, end, IF_TSRESOL);
    if (v >= 0 && this.optLen === 1) tsresol = buf[v]!;
    else if (v >= 0) this.optBad = true;
    let offsetSec = 0;
    v = this.option(buf, start, end, IF_TSOFFSET);
    if (v >= 0 && this.optLen === 8) offsetSec = this.i64(buf, v);
    else if (v >= 0) this.optBad = true;
    if (this.optBad) this.ctx.problem('bad-option', fileOff, 'interface description options are malformed; using defaults for the rest', false);
    if (!this.ifs.add(u16(buf, off + 8, le), u32(buf, off + 12, le), tsresol, offsetSec)) {
      this.ctx.problem('too-many-interfaces', fileOff, `more than ${this.ifs.count} interfaces in one section; ignoring this one`, false);
    }
  }

  private interfaceStatistics(buf: Uint8Array, off: number, len: number, fileOff: number): void {
    const id = u32(buf, off + 8, this.le);
    if (!this.knownInterface(id, fileOff)) return;
    const start = off + 20;
    const end = off + len - 4;
    this.optBad = false;
    let dropped = 0;
    let v = this.option(buf, start, end, ISB_IFDROP);
    if (v >= 0 && this.optLen === 8) dropped += this.u64(buf, v);
    v = this.option(buf, start, end, ISB_OSDROP);
    if (v >= 0 && this.optLen === 8) dropped += this.u64(buf, v);
    if (this.optBad) this.ctx.problem('bad-option', fileOff, 'interface statistics options are malformed', false);
    // Counters are cumulative since capture start: replace this interface's share of the total.
    this.ctx.summary.droppedByCapture += dropped - this.ifs.dropped[id]!;
    this.ifs.dropped[id] = dropped;
  }

  /** EPB, or the obsolete Packet Block (16-bit interface ID, 16-bit drop count, same layout otherwise). */
  private packet(buf: Uint8Array, off: number, len: number, fileOff: number, obsolete: boolean): void {
    const le = this.le;
    const cap = u32(buf, off + 20, le);
    if (cap > len - MIN_PACKET) {
      this.ctx.problem('captured-exceeds-block', fileOff, `packet captured length ${cap} exceeds the block's room ${len - MIN_PACKET}`, true);
      return;
    }
    const id = obsolete ? u16(buf, off + 8, le) : u32(buf, off + 8, le);
    if (!this.knownInterface(id, fileOff)) return;
    if (!this.capturedLengthOk(cap, id, fileOff)) return;
    const ifs = this.ifs;
    const t = this.t;
    const units = ifs.units[id]!;
    if (units > 0) ticksToInstant(u32(buf, off + 12, le), u32(buf, off + 16, le), units, ifs.nsPer[id]!, ifs.offsetSec[id]!, t);
    else ticksToInstantSlow(u32(buf, off + 12, le), u32(buf, off + 16, le), ifs.tsresol[id]!, ifs.offsetSec[id]!, t);
    this.ctx.deliver(buf, off + 28, cap, u32(buf, off + 24, le), t.sec, t.ns, ifs.linkType[id]!, fileOff, fileOff + 28);
  }

  /** SPB: interface 0 implied, no timestamp, captured = min(original, snaplen) (METHODS.md 1.2). */
  private simplePacket(buf: Uint8Array, off: number, len: number, fileOff: number): void {
    if (this.ifs.count !== 1) {
      this.ctx.problem('spb-interface-count', fileOff, `simple packet block in a section with ${this.ifs.count} interfaces (needs exactly one); skipped`, false);
      return;
    }
    const orig = u32(buf, off + 8, this.le);
    const snap = this.ifs.snaplen[0]!;
    const cap = snap !== 0 && snap < orig ? snap : orig;
    if (cap > len - MIN_SPB) {
      this.ctx.problem('captured-exceeds-block', fileOff, `simple packet captured length ${cap} exceeds the block's room ${len - MIN_SPB}`, true);
      return;
    }
    if (!this.capturedLengthOk(cap, 0, fileOff)) return;
    this.ctx.summary.untimed = true;
    this.ctx.deliver(buf, off + 12, cap, orig, this.ctx.lastSec, this.ctx.lastNs, this.ifs.linkType[0]!, fileOff, fileOff + 12);
  }

  private knownInterface(id: number, fileOff: number): boolean {
    if (id < this.ifs.count) return true;
    this.ctx.problem('unknown-interface', fileOff, `block refers to interface ${id}, but the section has ${this.ifs.count}; skipped`, false);
    return false;
  }

  private capturedLengthOk(cap: number, id: number, fileOff: number): boolean {
    const snap = this.ifs.snaplen[id]!;
    if (cap <= MAX_CAPTURED && (snap === 0 || cap <= snap)) return true;
    this.ctx.problem('record-too-long', fileOff, `packet captured length ${cap} exceeds ${cap > MAX_CAPTURED ? `the ${MAX_CAPTURED}-octet cap` : `snaplen ${snap}`}`, true);
    return false;
  }

  /**
   * Finds option `code` in the TLV list [start, end) and returns its value offset (length in `optLen`),
   * or -1. A list running past its block sets `optBad`. Only IDB and ISB options are read: not per packet.
   */
  private option(buf: Uint8Array, start: number, end: number, code: number): number {
    let p = start;
    while (p + 4 <= end) {
      const c = u16(buf, p, this.le);
      if (c === OPT_END) return -1;
      const n = u16(buf, p + 2, this.le);
      if (p + 4 + n > end) {
        this.optBad = true;
        return -1;
      }
      if (c === code) {
        this.optLen = n;
        return p + 4;
      }
      p += 4 + ((n + 3) & ~3);
    }
    return -1;
  }

  private u64(buf: Uint8Array, at: number): number {
    const a = u32(buf, at, this.le);
    const b = u32(buf, at + 4, this.le);
    return this.le ? b * 4294967296 + a : a * 4294967296 + b;
  }

  private i64(buf: Uint8Array, at: number): number {
    const a = u32(buf, at, this.le);
    const b = u32(buf, at + 4, this.le);
    return this.le ? (b | 0) * 4294967296 + a : (a | 0) * 4294967296 + b;
  }
}
