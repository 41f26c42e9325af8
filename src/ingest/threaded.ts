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
  name: string;
  opts: Omit<IngestOptions, 'onFormat' | 'onProblem' | 'onSource'>;
  /** inFlight[0]: batches posted and not yet taken by the main thread. */
  inFlight: Int32Array;
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

/**
 * ingestInput (index.ts) run on a second thread: reading, decoding and the flow table of one input
 * there, the caller's sink here, so a replay uses two cores. The same records reach `sink` in the same
 * order, the same problems reach onProblem (the first FORWARDED_PROBLEMS of them), and the summary is
 * ingestInput's. The reading thread waits when MAX_IN_FLIGHT batches are not taken yet: nothing is
 * dropped and memory does not grow with the input. Rejects with ingestInput's one-line error when the
 * input cannot be opened or recognised. `tuning` (tests) changes the batch size and the batches in flight.
 */
export function ingestOnThread(
  name: string, sink: FlowSink, opts: IngestOptions,
  tuning: { batchRecords?: number; maxInFlight?: number } = {},
): Promise<IngestSummary> {
  const { onFormat, onProblem, onSource, ...plain } = opts;
  const inFlight = new Int32Array(new SharedArrayBuffer(4));
  const data: ReaderData = {
    name, opts: plain, inFlight, batchRecords: tuning.batchRecords ?? BATCH_RECORDS,
    maxInFlight: tuning.maxInFlight ?? MAX_IN_FLIGHT, forwardedProblems: FORWARDED_PROBLEMS,
  };
  const worker = new Worker(WORKER, { workerData: data });
  let consumed = 0;
  const batches = new BatchReader();
  return new Promise((resolve, reject) => {
    let settled = false;
    const fail = (e: Error) => {
      if (settled) return;
      settled = true;
      void worker.terminate();
      reject(e);
    };
    worker.on('message', (m: FromReader) => {
      if (settled) return;
      try {
        switch (m.type) {
          case 'records':
            consumed = m.consumed;
            batches.read(m.batch, sink);
            Atomics.sub(inFlight, 0, 1);
            Atomics.notify(inFlight, 0);
            break;
          case 'format': onFormat?.(m.format); break;
          case 'source': onSource?.({ name: m.name, size: m.size, consumed: () => consumed }); break;
          case 'problem': onProblem?.(m.problem); break;
          case 'done': settled = true; resolve(m.summary); break;
          case 'failed': fail(new Error(m.message)); break;
        }
      } catch (e) {
        fail(e as Error);
      }
    });
    worker.on('error', (e) => fail(new Error(`${name}: reading thread failed (${e.message})`)));
    worker.on('exit', (code) => fail(new Error(`${name}: reading thread stopped (exit code ${code})`)));
  });
}
