import type { InputProblem } from '../util/problem.js';
import { MAX_KEPT_PROBLEMS } from './limits.js';
import type { CaptureSummary, PacketSink } from './types.js';

export function emptySummary(file: string): CaptureSummary {
  return {
    file,
    format: 'unknown',
    packets: 0,
    capturedBytes: 0,
    inputBytes: 0,
    problems: [],
    problemCounts: {},
    truncated: false,
    stopped: false,
    untimed: false,
    droppedByCapture: 0,
  };
}

/** What the format readers share: packet delivery with counters, and problem reporting. */
export class ReaderContext {
  /** Last delivered timestamp: the synthetic time of untimed (SPB) packets. */
  lastSec = 0;
  lastNs = 0;

  constructor(
    readonly summary: CaptureSummary,
    private readonly onPacket: PacketSink,
    private readonly onProblem: ((p: InputProblem) => void) | undefined,
  ) {}

  deliver(buf: Uint8Array, off: number, capLen: number, origLen: number, sec: number, ns: number, linkType: number, fileOff: number, dataOff: number): void {
    const s = this.summary;
    s.packets++;
    s.capturedBytes += capLen;
    this.lastSec = sec;
    this.lastNs = ns;
    // A reader MAY raise the original length to the captured length (draft-ietf-opsawg-pcap, packet record).
    this.onPacket(buf, off, capLen, origLen < capLen ? capLen : origLen, sec, ns, linkType, fileOff, dataOff);
  }

  /** Counts the problem; a fatal one stops the input. Objects are made only while kept or watched. */
  problem(reason: string, offset: number, message: string, fatal: boolean): void {
    const s = this.summary;
    s.problemCounts[reason] = (s.problemCounts[reason] ?? 0) + 1;
    if (fatal) {
      // Reading ends where the bad unit starts, whatever the chunking was.
      s.stopped = true;
      s.inputBytes = offset;
    }
    const keep = s.problems.length < MAX_KEPT_PROBLEMS;
    if (!keep && !this.onProblem) return;
    const p: InputProblem = { file: s.file, offset, reason, message, fatal };
    if (keep) s.problems.push(p);
    this.onProblem?.(p);
  }
}

/**
 * One capture format's framing, driven by CaptureParser. A "unit" is a file header, a pcap record or a
 * pcapng block: its length is known once `headBytes` octets are present.
 */
export interface UnitReader {
  /** Octets needed at a unit's start to know its length (may grow as more octets are seen). */
  headBytes(buf: Uint8Array, off: number, avail: number): number;
  /** Validates the unit's head and returns its total length, or 0 after reporting a fatal problem. */
  unitLength(buf: Uint8Array, off: number, fileOff: number): number;
  /** True when the unit last measured carries nothing to parse and may be streamed past unbuffered. */
  readonly skippable: boolean;
  /** Handles one whole unit. */
  consume(buf: Uint8Array, off: number, len: number, fileOff: number): void;
  /** Called after a skippable unit was streamed past; `tail` holds its last four octets. */
  skipped(tail: Uint8Array, len: number, fileOff: number): void;
  /**
   * Optional fast path: consumes the run of whole, well-formed packet units in buf[off, end) in one
   * loop and returns the offset after the last one. It stops, without reporting, at anything the
   * unit-by-unit path must see (a unit cut by the chunk end, a bad header), which then handles it.
   */
  packetRun?(buf: Uint8Array, off: number, end: number, fileOff: number): number;
}
