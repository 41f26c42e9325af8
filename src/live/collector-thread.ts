import { Worker } from 'node:worker_threads';
import type { FlowSink } from '../flow/record.js';
import type { CollectorAddresses, CollectorHandle, CollectorListen, CollectorStats } from '../flowlog/collector.js';
import type { InputProblem } from '../util/problem.js';
import { BatchReader, type RecordBatch } from '../flow/record-batch.js';

/** Messages of the collector thread. */
export type FromCollector =
  | { type: 'listening'; addresses: CollectorAddresses }
  | { type: 'error'; message: string }
  | { type: 'records'; batch: RecordBatch }
  | { type: 'problem'; problem: InputProblem }
  | { type: 'stats'; stats: CollectorStats; backlogDropped: number; problems: number }
  | { type: 'closed' };
export type ToCollector = { type: 'ack' } | { type: 'close' };

/** Records per batch, and how often a partial batch goes anyway (ours). */
const BATCH_RECORDS = 1024;
const FLUSH_MS = 50;
/**
 * Batches held for the main thread before records are dropped: about 256 k records, a second or more
 * of a busy exporter, enough to ride out window closes; a sensor that is slower than its input for
 * longer drops (counted) rather than grow without bound.
 */
const MAX_BATCHES_WAITING = 256;

export interface CollectorThreadHandle extends CollectorHandle {
  /** Records the collector thread gave up because the main thread was too far behind. */
  backlogDropped(): number;
  /** Problems met (the first ones also went to onProblem). */
  problemCount(): number;
}

/** A thread that does not finish closing in this time is stopped (ours). */
const CLOSE_TIMEOUT_MS = 5000;

/**
 * startCollector (flowlog/collector.ts) run on a worker thread: the same listeners, sessions and
 * counters, but the sockets are read while the main thread is busy, so a window close does not make
 * the kernel drop datagrams. Records arrive at `sink` in order, in batches, on the main thread.
 * Rejects with the collector's message when a listener cannot be bound.
 */
export function startCollectorThread(listen: CollectorListen, sink: FlowSink, onProblem?: (p: InputProblem) => void): Promise<CollectorThreadHandle> {
  const worker = new Worker(new URL('./collector-worker.js', import.meta.url), {
    workerData: { listen, batchRecords: BATCH_RECORDS, flushMs: FLUSH_MS, maxBatchesWaiting: MAX_BATCHES_WAITING },
  });
  // the thread sends its first counters before it says it is listening
  let stats: CollectorStats | null = null;
  let dropped = 0, problems = 0;
  let closing = false;
  let addresses: CollectorAddresses = {};
  let onClosed: (() => void) | null = null;
  const batches = new BatchReader();
  return new Promise((resolve, reject) => {
    worker.on('error', (e) => {
      reject(e);
      if (!closing) onProblem?.({ file: 'collector', offset: -1, reason: 'collector-failed', message: `collector thread failed: ${e.message}`, fatal: true });
    });
    worker.on('message', (m: FromCollector) => {
      switch (m.type) {
        case 'records':
          batches.read(m.batch, sink);
          worker.postMessage({ type: 'ack' } satisfies ToCollector);
          break;
        case 'problem': onProblem?.(m.problem); break;
        case 'stats': stats = m.stats; dropped = m.backlogDropped; problems = m.problems; break;
        case 'error': reject(new Error(m.message)); break;
        case 'closed': onClosed?.(); break;
        case 'listening':
          addresses = m.addresses;
          resolve({
            addresses: () => ({ ...addresses }),
            stats: () => stats!,
            backlogDropped: () => dropped,
            problemCount: () => problems,
            close: () => new Promise<void>((done) => {
              closing = true;
              const stop = () => { clearTimeout(timer); void worker.terminate().then(() => done()); };
              const timer = setTimeout(stop, CLOSE_TIMEOUT_MS);
              onClosed = stop;
              worker.postMessage({ type: 'close' } satisfies ToCollector);
            }),
          });
          break;
      }
    });
  });
}
