/**
 * A packet dated this far past every earlier one is held until the next packet shows whether time
 * really moved on (ours: corrupt timestamps are off by years; a day is longer than any clock step).
 */
export const MAX_FORWARD_JUMP_MS = 86_400_000;

import type { InputProblem } from '../util/problem.js';

/** Takes a packet on to the decoder and flow table: bytes, link type and time (epoch ms). */
export type PacketTaker = (buf: Uint8Array, off: number, capLen: number, linkType: number, tsMs: number) => void;

/**
 * Guards the capture path against an isolated corrupt timestamp. Event time only moves forward: one
 * packet dated a year ahead would close a year of windows, end every flow by idleness and leave the
 * rest of the capture late. So a packet more than MAX_FORWARD_JUMP_MS past the latest time seen is
 * held (copied: the reader reuses its buffer) until the next packet comes. When that one is past the
 * jump too, time really moved on (a capture resumed after a pause) and both are taken in order; when
 * it is back near the earlier time, the held packet was the corrupt one: it is dropped and reported.
 * A packet still held at the end of input is taken. Everything else passes straight through.
 */
export class ForwardJumpGuard {
  /** Latest time taken so far (NaN before the first packet), and the time past which a packet is held. */
  private latest = Number.NaN;
  private limit = Number.POSITIVE_INFINITY;
  private held: Uint8Array | null = null;
  private heldLink = 0;
  private heldTs = 0;
  private heldFileOff = 0;
  /** Packets dropped as corrupt timestamps. */
  outliers = 0;

  constructor(
    private readonly take: PacketTaker,
    private readonly onOutlier: (tsMs: number, latestMs: number, fileOff: number) => void,
  ) {}

  packet(buf: Uint8Array, off: number, capLen: number, linkType: number, tsMs: number, fileOff: number): void {
    if (tsMs > this.limit || this.held !== null) {
      this.unusual(buf, off, capLen, linkType, tsMs, fileOff);
      return;
    }
    if (!(tsMs <= this.latest)) this.moveTo(tsMs);
    this.take(buf, off, capLen, linkType, tsMs);
  }

  /** End of input: a packet still held is taken (nothing came to contradict it). */
  finish(): void {
    const h = this.held;
    if (h === null) return;
    this.held = null;
    this.moveTo(this.heldTs);
    this.take(h, 0, h.length, this.heldLink, this.heldTs);
  }

  private moveTo(tsMs: number): void {
    this.latest = tsMs;
    this.limit = tsMs + MAX_FORWARD_JUMP_MS;
  }

  private unusual(buf: Uint8Array, off: number, capLen: number, linkType: number, tsMs: number, fileOff: number): void {
    const h = this.held;
    if (h === null) {
      this.held = buf.slice(off, off + capLen);
      this.heldLink = linkType;
      this.heldTs = tsMs;
      this.heldFileOff = fileOff;
      return;
    }
    this.held = null;
    if (tsMs > this.limit) {
      this.moveTo(this.heldTs);
      this.take(h, 0, h.length, this.heldLink, this.heldTs);
    } else {
      this.outliers++;
      this.onOutlier(this.heldTs, this.latest, this.heldFileOff);
    }
    // the packet that decided is judged as any other (it may be a jump of its own)
    this.packet(buf, off, capLen, linkType, tsMs, fileOff);
  }
}

/** The one-line problem for a dropped packet (offset: its record in the capture). */
export function outlierProblem(file: string, tsMs: number, latestMs: number, fileOff: number): InputProblem {
  const days = (tsMs - latestMs) / 86_400_000;
  return {
    file, offset: fileOff, reason: 'timestamp-outlier', fatal: false,
    message: `packet dated ${new Date(tsMs).toISOString()}, ${days >= 2 ? `${Math.round(days)} days` : `${Math.round(days * 24)} hours`} past the capture's time `
      + `(${new Date(latestMs).toISOString()}) while the next packet is not: a corrupt timestamp, packet skipped`,
  };
}
