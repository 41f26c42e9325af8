/**
 * The flow-export collector on its own thread (started by collector-thread.ts). Its event loop only
 * reads sockets and decodes, so datagrams keep being taken from the socket while the main thread is
 * busy closing a window; records go to the main thread in batches.
 */
import { parentPort, workerData } from 'node:worker_threads';
import type { FlowRecord } from '../flow/record.js';
import { startCollector, type CollectorListen, type CollectorStats } from '../flowlog/collector.js';
import type { InputProblem } from '../util/problem.js';
import { BatchWriter, type RecordBatch } from '../flow/record-batch.js';
import type { FromCollector, ToCollector } from './collector-thread.js';

const port = parentPort!;
const { listen, batchRecords, flushMs, maxBatchesWaiting } = workerData as {
  listen: CollectorListen; batchRecords: number; flushMs: number; maxBatchesWaiting: number;
};
const post = (m: FromCollector, transfer?: ArrayBuffer[]) => port.postMessage(m, transfer);

const writer = new BatchWriter(batchRecords);
/**
 * Batches wait here until the main thread asks for more: it holds at most CREDITS at once, so each
 * arrives in its own turn of the main event loop and timers and signals run in between.
 */
const waiting: RecordBatch[] = [];
const CREDITS = 2;
let credits = CREDITS;
let backlogDropped = 0;
const pump = () => {
  while (credits > 0 && waiting.length > 0) {
    const b = waiting.shift()!;
    credits--;
    post({ type: 'records', batch: b }, [b.numbers.buffer as ArrayBuffer]);
  }
};
const flush = () => {
  if (writer.count === 0) return;
  waiting.push(writer.take());
  pump();
};
const sink = (r: FlowRecord) => {
  // the main thread is this far behind: keep memory bounded and count what is given up
  if (waiting.length >= maxBatchesWaiting) { backlogDropped++; return; }
  writer.add(r);
  if (writer.full) flush();
};
/** Problems forwarded one by one; past that they are only counted (a hostile exporter makes many). */
const FORWARDED_PROBLEMS = 100;
let problems = 0;
const onProblem = (p: InputProblem) => {
  if (++problems <= FORWARDED_PROBLEMS) post({ type: 'problem', problem: p });
};
const counters = (stats: CollectorStats): FromCollector =>
  ({ type: 'stats', stats, backlogDropped, problems });

try {
  const handle = await startCollector(listen, sink, onProblem);
  post(counters(handle.stats()));
  post({ type: 'listening', addresses: handle.addresses() });
  const timer = setInterval(() => {
    flush();
    post(counters(handle.stats()));
  }, flushMs);
  port.on('message', (m: ToCollector) => {
    if (m.type === 'ack') { credits++; pump(); return; }
    clearInterval(timer);
    void handle.close().then(() => {
      // closing: everything still held goes now, ahead of the last counters (messages keep their order)
      flush();
      credits = Infinity;
      pump();
      post(counters(handle.stats()));
      post({ type: 'closed' });
      port.close();
    });
  });
} catch (e) {
  post({ type: 'error', message: (e as Error).message });
  port.close();
}
