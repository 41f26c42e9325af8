/**
 * The reading thread of ReadingThread (threaded.ts): runs ingestInput on each of its inputs in turn
 * and sends their records to the main thread in transferred batches, waiting while the main thread is
 * behind. One thread for all the inputs of a run: its compiled decoder stays warm from file to file.
 */
import { parentPort, workerData } from 'node:worker_threads';
import type { FlowRecord } from '../flow/record.js';
import { BatchWriter } from '../flow/record-batch.js';
import { ingestInput } from './index.js';
import type { FromReader, ReaderData } from './threaded.js';
import type { SourceProgress } from './types.js';

const port = parentPort!;
const { names, opts, control, batchRecords, maxInFlight, forwardedProblems } = workerData as ReaderData;
const post = (m: FromReader, transfer?: ArrayBuffer[]) => port.postMessage(m, transfer);

const writer = new BatchWriter(batchRecords);
let source: SourceProgress | null = null;

const flush = () => {
  if (writer.count === 0) return;
  const batch = writer.take();
  Atomics.add(control, 0, 1);
  post({ type: 'records', batch, consumed: source?.consumed() ?? 0 }, [batch.numbers.buffer as ArrayBuffer]);
  // the main thread takes batches in order; this thread blocks (not spins) until it has room again
  for (;;) {
    const n = Atomics.load(control, 0);
    if (n < maxInFlight) break;
    Atomics.wait(control, 0, n, 1000);
  }
};
const sink = (r: FlowRecord) => {
  writer.add(r);
  if (writer.full) flush();
};

for (let input = 0; input < names.length; input++) {
  let problems = 0;
  source = null;
  try {
    const summary = await ingestInput(names[input]!, sink, {
      ...opts,
      onFormat: (format) => post({ type: 'format', format }),
      // a partial batch goes whenever the reader comes back for bytes (every 4 MiB of a file), so the
      // main thread starts on the first records without waiting for a full batch
      onRead: flush,
      onSource: (src) => { source = src; post({ type: 'source', name: src.name, size: src.size }); },
      onProblem: (problem) => { if (++problems <= forwardedProblems) post({ type: 'problem', problem }); },
    });
    flush();
    post({ type: 'done', summary });
  } catch (e) {
    flush();
    post({ type: 'failed', message: (e as Error).message });
  }
}
port.close();
