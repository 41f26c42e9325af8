import type { InputProblem } from '../util/problem.js';
import { magicAt } from './bytes.js';
import { emptySummary, ReaderContext, type UnitReader } from './context.js';
import { isPcapMagic, PcapReader } from './pcap.js';
import { BLOCK_SHB, PcapngReader } from './pcapng.js';
import type { CaptureSummary, PacketSink } from './types.js';

const INITIAL_CARRY = 64 * 1024;
/** "Modified pcap" magics (both orders): a known but unsupported variant (METHODS.md 1.1 [M]). */
const MODIFIED_PCAP_BE = 0xa1b2cd34;
const MODIFIED_PCAP_LE = 0x34cdb2a1;

/**
 * Streaming pcap/pcapng reader. Feed chunks of any size with `push`; a packet lying wholly inside a
 * chunk is handed over as (chunk, offset) without a copy. Only a unit (record or block) straddling two
 * chunks is assembled in a reused carry buffer; skippable pcapng blocks are streamed past unbuffered.
 * Bad input becomes InputProblems; nothing is thrown.
 */
export class CaptureParser {
  readonly summary: CaptureSummary;
  private readonly ctx: ReaderContext;
  private reader: UnitReader | null = null;
  private ended = false;

  /** The unit being assembled across chunks: carry[0, carryLen), total `unitLen` (0 while unknown). */
  private carry = new Uint8Array(INITIAL_CARRY);
  private carryLen = 0;
  private unitLen = 0;
  /** File offset of the unit being carried or skipped. */
  private unitOff = 0;
  /** A skippable unit being streamed past: its total length, octets passed, and its last four octets. */
  private skipTotal = 0;
  private skipDone = 0;
  private readonly skipTail = new Uint8Array(4);

  constructor(file: string, onPacket: PacketSink, onProblem?: (p: InputProblem) => void) {
    this.summary = emptySummary(file);
    this.ctx = new ReaderContext(this.summary, onPacket, onProblem);
  }

  /** Feed the next chunk (may be a reused buffer). Returns false once stopped (fatal problem). */
  push(input: Uint8Array): boolean {
    const s = this.summary;
    if (s.stopped || this.ended) return false;
    // Files hand over Buffers, the carry is a plain Uint8Array: one plain view per chunk keeps every
    // byte read in the readers (and the decoder after them) on one array type.
    const chunk = input.constructor === Uint8Array ? input : new Uint8Array(input.buffer, input.byteOffset, input.length);
    const n = chunk.length;
    const base = s.inputBytes;
    s.inputBytes = base + n;
    let pos = 0;
    if (this.skipTotal > 0) pos = this.continueSkip(chunk, 0);
    else if (this.carryLen > 0) pos = this.continueCarry(chunk, 0);
    while (pos < n && !s.stopped) {
      const r = this.reader;
      if (r?.packetRun) {
        pos = r.packetRun(chunk, pos, n, base + pos);
        if (pos >= n) break;
      }
      const avail = n - pos;
      const need = this.headNeed(chunk, pos, avail);
      if (need === 0) break;
      if (avail < need) {
        this.startCarry(chunk, pos, avail, base + pos, 0);
        break;
      }
      const reader = this.reader!;
      const len = reader.unitLength(chunk, pos, base + pos);
      if (len === 0) break;
      if (len <= avail) {
        reader.consume(chunk, pos, len, base + pos);
        pos += len;
      } else if (reader.skippable) {
        this.startSkip(len, base + pos);
        this.feedSkip(chunk, pos, avail);
        break;
      } else {
        this.startCarry(chunk, pos, avail, base + pos, len);
        break;
      }
    }
    return !s.stopped;
  }

  /** Input ended: reports truncation if inside a record; returns the summary. */
  end(): CaptureSummary {
    const s = this.summary;
    if (this.ended) return s;
    this.ended = true;
    if (s.stopped) return s;
    if (this.carryLen > 0 || this.skipTotal > 0) {
      s.truncated = true;
      const what = this.reader === null ? 'the file magic' : this.unitLen > 0 || this.skipTotal > 0 ? 'a record' : 'a record header';
      this.ctx.problem('truncated', this.unitOff, `input ended inside ${what} starting at byte ${this.unitOff}; everything before it was read`, false);
    } else if (s.inputBytes === 0) {
      this.ctx.problem('empty-input', 0, 'input is empty', false);
    }
    return s;
  }

  /** Stops the input with a fatal problem met outside the parser (a read error). */
  fail(reason: string, message: string): void {
    if (!this.summary.stopped) this.ctx.problem(reason, this.summary.inputBytes, message, true);
  }

  /** Octets needed at a unit start to know its length; picks the format at the first unit; 0 = stopped. */
  private headNeed(buf: Uint8Array, off: number, avail: number): number {
    if (this.reader === null) {
      if (avail < 4) return 4;
      this.reader = this.readerFor(magicAt(buf, off));
      if (this.reader === null) return 0;
    }
    return this.reader.headBytes(buf, off, avail);
  }

  private readerFor(magic: number): UnitReader | null {
    if (isPcapMagic(magic)) return new PcapReader(this.ctx, magic);
    if (magic === BLOCK_SHB) return new PcapngReader(this.ctx);
    const hex = magic.toString(16).padStart(8, '0');
    const known = magic === MODIFIED_PCAP_BE || magic === MODIFIED_PCAP_LE;
    this.ctx.problem('not-a-capture', 0, known ? `"modified pcap" (magic 0x${hex}) is not supported` : `not a pcap or pcapng file (magic 0x${hex})`, true);
    return null;
  }

  private startCarry(chunk: Uint8Array, pos: number, count: number, fileOff: number, unitLen: number): void {
    this.unitOff = fileOff;
    this.unitLen = unitLen;
    this.carryLen = 0;
    if (unitLen > 0) this.reserve(unitLen);
    this.carry.set(chunk.subarray(pos, pos + count), 0);
    this.carryLen = count;
  }

  /** Completes the carried unit from the chunk; returns the chunk position after what was used. */
  private continueCarry(chunk: Uint8Array, pos: number): number {
    const n = chunk.length;
    while (this.unitLen === 0) {
      const need = this.headNeed(this.carry, 0, this.carryLen);
      if (need === 0) return n;
      if (this.carryLen < need) {
        const take = Math.min(need - this.carryLen, n - pos);
        this.carry.set(chunk.subarray(pos, pos + take), this.carryLen);
        this.carryLen += take;
        pos += take;
        if (this.carryLen < need) return pos;
        continue;
      }
      const reader = this.reader!;
      const len = reader.unitLength(this.carry, 0, this.unitOff);
      if (len === 0) return n;
      if (reader.skippable && len > this.carryLen) {
        this.startSkip(len, this.unitOff);
        this.feedSkip(this.carry, 0, this.carryLen);
        this.carryLen = 0;
        return this.continueSkip(chunk, pos);
      }
      this.reserve(len);
      this.unitLen = len;
    }
    const take = Math.min(this.unitLen - this.carryLen, n - pos);
    this.carry.set(chunk.subarray(pos, pos + take), this.carryLen);
    this.carryLen += take;
    pos += take;
    if (this.carryLen < this.unitLen) return pos;
    const len = this.unitLen;
    this.carryLen = 0;
    this.unitLen = 0;
    this.reader!.consume(this.carry, 0, len, this.unitOff);
    return pos;
  }

  /** Grows the carry buffer to hold `len` octets (readers cap unit lengths before asking). */
  private reserve(len: number): void {
    if (this.carry.length >= len) return;
    const grown = new Uint8Array(Math.max(len, this.carry.length * 2));
    grown.set(this.carry.subarray(0, this.carryLen), 0);
    this.carry = grown;
  }

  private startSkip(total: number, fileOff: number): void {
    this.unitOff = fileOff;
    this.skipTotal = total;
    this.skipDone = 0;
  }

  private continueSkip(chunk: Uint8Array, pos: number): number {
    const take = Math.min(this.skipTotal - this.skipDone, chunk.length - pos);
    this.feedSkip(chunk, pos, take);
    return pos + take;
  }

  /** Passes `count` octets of the skipped unit, keeping its last four for the trailing-length check. */
  private feedSkip(buf: Uint8Array, off: number, count: number): void {
    const tailStart = this.skipTotal - 4;
    for (let p = Math.max(this.skipDone, tailStart); p < this.skipDone + count; p++) {
      this.skipTail[p - tailStart] = buf[off + p - this.skipDone]!;
    }
    this.skipDone += count;
    if (this.skipDone < this.skipTotal) return;
    const len = this.skipTotal;
    this.skipTotal = 0;
    this.skipDone = 0;
    this.reader!.skipped(this.skipTail, len, this.unitOff);
  }
}
