import { u16, u32 } from './bytes.js';
import type { ReaderContext, UnitReader } from './context.js';
import { MAX_CAPTURED } from './limits.js';

/** Classic pcap sizes (METHODS.md 1.1, check values 10 row 1). */
export const PCAP_FILE_HEADER = 24;
export const PCAP_RECORD_HEADER = 16;

/** Magic numbers as one big-endian word of the first four octets (METHODS.md 1.1). */
export const PCAP_MAGIC_US_BE = 0xa1b2c3d4;
export const PCAP_MAGIC_US_LE = 0xd4c3b2a1;
export const PCAP_MAGIC_NS_BE = 0xa1b23c4d;
export const PCAP_MAGIC_NS_LE = 0x4d3cb2a1;

export function isPcapMagic(m: number): boolean {
  return m === PCAP_MAGIC_US_BE || m === PCAP_MAGIC_US_LE || m === PCAP_MAGIC_NS_BE || m === PCAP_MAGIC_NS_LE;
}

/** Classic pcap: a 24-octet file header, then 16-octet record headers each followed by unpadded data. */
export class PcapReader implements UnitReader {
  readonly skippable = false;
  private readonly le: boolean;
  private readonly nano: boolean;
  private headerDone = false;
  private snaplen = 0;
  private linkType = 0;

  constructor(private readonly ctx: ReaderContext, magic: number) {
    this.le = magic === PCAP_MAGIC_US_LE || magic === PCAP_MAGIC_NS_LE;
    this.nano = magic === PCAP_MAGIC_NS_BE || magic === PCAP_MAGIC_NS_LE;
    ctx.summary.format = 'pcap';
  }

  headBytes(): number {
    return this.headerDone ? PCAP_RECORD_HEADER : PCAP_FILE_HEADER;
  }

  unitLength(buf: Uint8Array, off: number, fileOff: number): number {
    if (!this.headerDone) return PCAP_FILE_HEADER;
    const sub = u32(buf, off + 4, this.le);
    if (sub >= (this.nano ? 1_000_000_000 : 1_000_000)) {
      this.ctx.problem('bad-timestamp', fileOff, `record sub-second field ${sub} is out of range for ${this.nano ? 'nanoseconds' : 'microseconds'}`, true);
      return 0;
    }
    const cap = u32(buf, off + 8, this.le);
    if (cap > MAX_CAPTURED || (this.snaplen !== 0 && cap > this.snaplen)) {
      this.ctx.problem('record-too-long', fileOff, `record captured length ${cap} exceeds ${cap > MAX_CAPTURED ? `the ${MAX_CAPTURED}-octet cap` : `snaplen ${this.snaplen}`}`, true);
      return 0;
    }
    return PCAP_RECORD_HEADER + cap;
  }

  consume(buf: Uint8Array, off: number, len: number, fileOff: number): void {
    if (!this.headerDone) {
      this.readFileHeader(buf, off);
      return;
    }
    const le = this.le;
    const sub = u32(buf, off + 4, le);
    this.ctx.deliver(buf, off + PCAP_RECORD_HEADER, len - PCAP_RECORD_HEADER, u32(buf, off + 12, le),
      u32(buf, off, le), this.nano ? sub : sub * 1000, this.linkType, fileOff, fileOff + PCAP_RECORD_HEADER);
  }

  skipped(): void {
    // Nothing in classic pcap is skippable.
  }

  /** Whole records back to back, checked as `unitLength` checks them (anything else stops the run). */
  packetRun(buf: Uint8Array, off: number, end: number, fileOff: number): number {
    if (!this.headerDone) return off;
    const le = this.le, nano = this.nano, ctx = this.ctx, linkType = this.linkType;
    const subLimit = nano ? 1_000_000_000 : 1_000_000;
    const capLimit = this.snaplen !== 0 && this.snaplen < MAX_CAPTURED ? this.snaplen : MAX_CAPTURED;
    let p = off;
    while (p + PCAP_RECORD_HEADER <= end) {
      const sub = u32(buf, p + 4, le);
      const cap = u32(buf, p + 8, le);
      const next = p + PCAP_RECORD_HEADER + cap;
      if (sub >= subLimit || cap > capLimit || next > end) break;
      const at = fileOff + p - off;
      ctx.deliver(buf, p + PCAP_RECORD_HEADER, cap, u32(buf, p + 12, le), u32(buf, p, le), nano ? sub : sub * 1000, linkType, at, at + PCAP_RECORD_HEADER);
      p = next;
    }
    return p;
  }

  private readFileHeader(buf: Uint8Array, off: number): void {
    const major = u16(buf, off + 4, this.le);
    if (major !== 2) {
      // Only version 2 exists; readers of 2.x accept any minor (2.4 is written today) [M].
      this.ctx.problem('bad-version', 0, `pcap version ${major}.${u16(buf, off + 6, this.le)} is not supported (expected 2.4)`, true);
      return;
    }
    this.snaplen = u32(buf, off + 16, this.le);
    if (this.snaplen === 0) {
      this.ctx.problem('bad-snaplen', 16, 'pcap header SnapLen is 0 (must not be); reading without a snaplen limit', false);
    }
    // Low 16 bits are the link type; the upper bits carry the FCS length (METHODS.md 1.1).
    this.linkType = u32(buf, off + 20, this.le) & 0xffff;
    this.headerDone = true;
  }
}
