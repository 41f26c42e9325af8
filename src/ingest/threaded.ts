import { Worker } from 'node:worker_threads';
import { fileURLToPath } from 'node:url';
import type { FlowSink } from '../flow/record.js';
import { BatchReader, type RecordBatch } from '../flow/record-batch.js';
import type { InputProblem } from '../util/problem.js';
import type { IngestOptions, IngestSummary, InputFormat } from './types.js';

/** Messages of the reading thread, in the order it meets things. */
export type FromReader =
  | { type: 'format'; format: InputFormat }
  | { type: 'source'; name: string; size: number }
  | { type: 'problem'; problem: InputProblem }
  | { type: 'records'; batch: RecordBatch; consumed: number }
  | { type: 'done'; summary: IngestSummary }
  | { type: 'failed'; message: string };

/** What the reading thread is started with. */
export interface ReaderData {
  /** The inputs it reads, in order. */
  names: string[];
  opts: Omit<IngestOptions, 'onFormat' | 'onProblem' | 'onSource'>;
  /** control[0]: batches posted and not yet taken by the main thread. */
  control: Int32Array;
  batchRecords: number;
  maxInFlight: number;
  forwardedProblems: number;
}

/** Records per batch (ours: a few hundred kilobytes, a few dozen messages per million records). */
const BATCH_RECORDS = 4096;
/**
 * Batches on their way before the reading thread waits (ours): about 130 k records, 20 MB, enough that
 * the reading thread keeps going while the main thread closes a window (the detectors run in a burst);
 * the main thread's share of the memory stays bounded when it is the slower side.
 */
const MAX_IN_FLIGHT = 32;
/** Problems forwarded one by one (the CLI prints the first 20); the summary counts all of them. */
const FORWARDED_PROBLEMS = 100;

// Compiled, this file sits beside reader-worker.js; under vitest the sources run as TypeScript and the
// thread runs the compiled worker (npm test builds first).
const here = fileURLToPath(import.meta.url);
const WORKER = here.endsWith('.ts')
  ? new URL('../../dist/src/ingest/reader-worker.js', import.meta.url)
  : new URL('./reader-worker.js', import.meta.url);

/** Batch size and batches in flight (tests make them small). */
export interface ReaderTuning { batchRecords?: number; maxInFlight?: number }

type ThreadEvent = { kind: 'message'; m: FromReader } | { kind: 'error'; e: Error } | { kind: 'exit'; code: number };

/** Per-input hooks of ReadingThread.run. */
export type RunHooks = Pick<IngestOptions, 'onFormat' | 'onProblem' | 'onSource'> & {
  /**
   * The sink keeps no record it is given (it copies what it needs, as the sensor does): one record
   * object is then filled anew for each record instead of one made per record.
   */
  transient?: boolean;
};

/**
 * The inputs of a run read on one thread, in order; run(i) takes input i's records. The thread goes
 * from one input to the next by itself (bounded by MAX_IN_FLIGHT batches not taken yet), so the next
 * file is being read while the current one's last records are counted, and its compiled decoder stays
 * warm across files. What it sends before run() asks for it waits here, in order.
 */
export class ReadingThread {
  private readonly worker: Worker;
  /** [0]: batches posted and not taken yet. */
  private readonly control = new Int32Array(new SharedArrayBuffer(4));
  private readonly queued: ThreadEvent[] = [];
  private handle: ((ev: ThreadEvent) => void) | null = null;
  /** The string table of the thread's batches spans all its inputs. */
  private readonly batches = new BatchReader();
  /** The thread failed or was stopped: later inputs need a new one. */
  broken = false;

  constructor(readonly names: readonly string[], opts: Omit<IngestOptions, 'onFormat' | 'onProblem' | 'onSource'>, tuning: ReaderTuning = {}) {
    const data: ReaderData = {
      names: [...names], opts, control: this.control, batchRecords: tuning.batchRecords ?? BATCH_RECORDS,
      maxInFlight: tuning.maxInFlight ?? MAX_IN_FLIGHT, forwardedProblems: FORWARDED_PROBLEMS,
    };
    this.worker = new Worker(WORKER, { workerData: data });
    this.worker.on('message', (m: FromReader) => this.push({ kind: 'message', m }));
    this.worker.on('error', (e) => this.push({ kind: 'error', e }));
    this.worker.on('exit', (code) => this.push({ kind: 'exit', code }));
  }

  /** Takes input `index`'s records into `sink` (inputs in order) and resolves with its summary. */
  run(index: number, sink: FlowSink, hooks: RunHooks = {}): Promise<IngestSummary> {
    const { onFormat, onProblem, onSource, transient } = hooks;
    const control = this.control, name = this.names[index]!, batches = this.batches;
    let consumed = 0;
    return new Promise((resolve, reject) => {
      let settled = false;
      const finish = () => { settled = true; this.handle = null; };
      const fail = (e: Error, broken: boolean) => {
        if (settled) return;
        finish();
        if (broken) this.stop();
        reject(e);
      };
      const handle = (ev: ThreadEvent) => {
        if (settled) return;
        if (ev.kind === 'error') return fail(new Error(`${name}: reading thread failed (${ev.e.message})`), true);
        if (ev.kind === 'exit') return fail(new Error(`${name}: reading thread stopped (exit code ${ev.code})`), true);
        const m = ev.m;
        try {
          switch (m.type) {
            case 'records':
              consumed = m.consumed;
              batches.read(m.batch, sink, transient === true);
              Atomics.sub(control, 0, 1);
              Atomics.notify(control, 0);
              break;
            case 'format': onFormat?.(m.format); break;
            case 'source': onSource?.({ name: m.name, size: m.size, consumed: () => consumed }); break;
            case 'problem': onProblem?.(m.problem); break;
            case 'done': finish(); resolve(m.summary); break;
            // the input could not be opened or recognised: the thread goes on with the next one
            case 'failed': fail(new Error(m.message), false); break;
          }
        } catch (e) {
          fail(e as Error, true);
        }
      };
      if (this.broken) return reject(new Error(`${name}: reading thread stopped`));
      // events up to this input's end are this input's (the thread sends inputs one after another)
      while (this.queued.length > 0 && !settled) handle(this.queued.shift()!);
      if (!settled) this.handle = handle;
    });
  }

  /** Stops the thread (after a failure, or when the remaining inputs will not be run). */
  stop(): void {
    this.broken = true;
    this.queued.length = 0;
    void this.worker.terminate();
  }

  private push(ev: ThreadEvent): void {
    if (this.broken) return;
    if (this.handle) this.handle(ev);
    else this.queued.push(ev);
  }
}

/**
 * ingestInput (index.ts) run on a second thread: reading, decoding and the flow table of one input
 * there, the caller's sink here, so a replay uses two cores. The same records reach `sink` in the same
 * order, the same problems reach onProblem (the first FORWARDED_PROBLEMS of them), and the summary is
 * ingestInput's. The reading thread waits when MAX_IN_FLIGHT batches are not taken yet: nothing is
 * dropped and memory does not grow with the input. Rejects with ingestInput's one-line error when the
 * input cannot be opened or recognised. `tuning` (tests) changes the batch size and the batches in flight;
 * `transient` as in RunHooks.
 */
export function ingestOnThread(
  name: string, sink: FlowSink, opts: IngestOptions, tuning: ReaderTuning & { transient?: boolean } = {},
): Promise<IngestSummary> {
  const { onFormat, onProblem, onSource, ...plain } = opts;
  const thread = new ReadingThread([name], plain, tuning);
  return thread.run(0, sink, { onFormat, onProblem, onSource, transient: tuning.transient });
}
