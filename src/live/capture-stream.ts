import type { Readable } from 'node:stream';
import { CaptureParser } from '../capture/parser.js';
import type { CaptureSummary, PacketSink } from '../capture/types.js';
import { Decoder } from '../decode/decoder.js';
import type { FlowSink } from '../flow/record.js';
import { FlowTable } from '../flow/table.js';
import { ForwardJumpGuard, outlierProblem } from '../flow/time-guard.js';
import { DEFAULT_INGEST } from '../ingest/types.js';
import type { InputProblem } from '../util/problem.js';

export interface LiveCaptureOptions {
  windowMs: number;
  /** The input's name as the user gave it (`-`), for problems. */
  file: string;
  /** FlowRecord.exporter (the capture path uses the input's base name: `stdin` for `-`). */
  exporter: string;
  onProblem?: (p: InputProblem) => void;
  /** Every packet's time (the live clock). */
  onPacketTime?: (ms: number) => void;
  /** Flow-table cap (`--max-flows`); default DEFAULT_INGEST.maxFlows. */
  maxFlows?: number;
}

/**
 * A capture arriving in pieces (a pipe delivers 64 KiB at a time): the same parser -> decoder ->
 * flow table path as the file ingest (flow/ingest.ts), pushed chunk by chunk, with `advance` so the
 * flow table cuts its windows when the link goes quiet. Same packets, same flow records, same order.
 */
export class LiveCapture {
  readonly parser: CaptureParser;
  readonly decoder = new Decoder();
  readonly table: FlowTable;
  private ended = false;
  /** Holds a packet dated far ahead until the next one confirms it (flow/time-guard.ts). */
  private readonly guard: ForwardJumpGuard;

  constructor(opts: LiveCaptureOptions, sink: FlowSink) {
    const decoder = this.decoder;
    const view = decoder.view;
    const table = new FlowTable({
      windowMs: opts.windowMs,
      idleTimeoutMs: DEFAULT_INGEST.idleTimeoutMs,
      activeTimeoutMs: DEFAULT_INGEST.activeTimeoutMs,
      maxFlows: opts.maxFlows ?? DEFAULT_INGEST.maxFlows,
      exporter: opts.exporter,
    }, sink);
    this.table = table;
    const onTime = opts.onPacketTime;
    // one closure per capture, none per packet
    const take = (buf: Uint8Array, off: number, capLen: number, linkType: number, ts: number) => {
      onTime?.(ts);
      if (decoder.decode(buf, off, capLen, linkType)) { view.tsMs = ts; table.add(view); }
      else table.advance(ts);
    };
    const guard = this.guard = new ForwardJumpGuard(take, (ts, latest, fileOff) => opts.onProblem?.(outlierProblem(opts.file, ts, latest, fileOff)));
    const onPacket: PacketSink = (buf, off, capLen, _origLen, tsSec, tsNs, linkType, fileOff) => {
      guard.packet(buf, off, capLen, linkType, tsSec * 1000 + tsNs / 1e6, fileOff);
    };
    this.parser = new CaptureParser(opts.file, onPacket, opts.onProblem);
  }

  /** Feeds a chunk; false once the input stopped (a fatal problem such as not a capture). */
  push(chunk: Uint8Array): boolean {
    return this.parser.push(chunk);
  }

  /** Idleness: moves the flow table's event time forward, cutting the updates that are due. */
  advance(tMs: number): void {
    if (!this.ended) this.table.advance(tMs);
  }

  /** End of the stream (or of the run): every pending flow update goes out. */
  end(): CaptureSummary {
    if (!this.ended) {
      this.ended = true;
      this.parser.end();
      this.guard.finish();
      this.table.flush();
    }
    return this.parser.summary;
  }

  get packets(): number {
    return this.parser.summary.packets;
  }
}

/**
 * Reads a stream (stdin) into a LiveCapture until it ends, the capture stops on a fatal problem, or
 * `stop` is called; `done` says which. The caller ends the capture.
 */
export type StreamEnd = 'end-of-stream' | 'stopped' | 'read-error' | 'not-readable';

export function pumpStream(stream: Readable, capture: LiveCapture): { done: Promise<StreamEnd>; stop(): void } {
  let finish!: (why: StreamEnd) => void;
  const done = new Promise<StreamEnd>((r) => (finish = r));
  let over = false;
  const end = (why: StreamEnd) => {
    if (over) return;
    over = true;
    stream.off('data', onData);
    stream.pause();
    finish(why);
  };
  const onData = (chunk: Buffer) => {
    if (!capture.push(chunk)) end('not-readable');
  };
  stream.on('data', onData);
  stream.once('end', () => end('end-of-stream'));
  stream.once('error', (e: Error) => {
    capture.parser.fail('read-error', `read failed: ${e.message}`);
    end('read-error');
  });
  return { done, stop: () => end('stopped') };
}
