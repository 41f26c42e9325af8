import { inTimeOrder } from '../ingest/first-time.js';
import { inputNotes } from '../ingest/hints.js';
import { ingestInput } from '../ingest/index.js';
import { ReadingThread } from '../ingest/threaded.js';
import { DEFAULT_INGEST, type IngestSummary, type InputFormat, type SourceProgress } from '../ingest/types.js';
import type { FlowSink } from '../flow/record.js';
import { formatProblem, type InputProblem } from '../util/problem.js';
import { rfc3339 } from '../util/time.js';
import { Progress } from './progress.js';
import { escapeControls } from '../sink/console.js';

const MAX_PRINTED_PROBLEMS = 20;

export interface RunInputsOptions {
  windowMs: number;
  inputFormat?: InputFormat;
  quiet: boolean;
  /** Capture flow-table cap (default DEFAULT_INGEST.maxFlows). */
  maxFlows?: number;
  onFormat?: (f: InputFormat) => void;
  /**
   * Read, decode and build flows for files on a second thread while `sink` runs here (default true);
   * stdin is always read on this thread.
   */
  readThread?: boolean;
  /** `sink` keeps none of the records it is given (the sensor's record()): they may share one object. */
  recordsTransient?: boolean;
  /** Shows reading progress (default: one of our own, silent with `quiet`); pass one to clear it before other output. */
  progress?: Progress;
}

export interface RunInputsResult {
  summaries: IngestSummary[];
  /** Inputs that could not be read at all (exit 3). */
  unreadable: string[];
}

/**
 * Reads every INPUT in turn into `sink`, captures in the order of their first packets (said on stderr
 * when that is not the order given). Problems are printed as one line each on stderr (bounded); an
 * input that cannot be opened or recognised is reported and the others still run.
 */
export async function runInputs(given: readonly string[], sink: FlowSink, o: RunInputsOptions): Promise<RunInputsResult> {
  const inputs = await inTimeOrder(given);
  if (!o.quiet && inputs.some((n, i) => n !== given[i])) {
    process.stderr.write(`tidewatch: reading the captures in the order of their first packets: ${escapeControls(inputs.join(', '))}\n`);
  }
  const summaries: IngestSummary[] = [];
  const unreadable: string[] = [];
  let printed = 0;
  const progress = o.progress ?? new Progress({ quiet: o.quiet });
  const onProblem = (p: InputProblem) => {
    if (o.quiet) return;
    progress.clear();
    if (printed < MAX_PRINTED_PROBLEMS) process.stderr.write(`tidewatch: ${escapeControls(formatProblem(p))}\n`);
    else if (printed === MAX_PRINTED_PROBLEMS) process.stderr.write('tidewatch: further problems are counted in the summary only\n');
    printed++;
  };
  const base = { ...DEFAULT_INGEST, windowMs: o.windowMs, maxFlows: o.maxFlows ?? DEFAULT_INGEST.maxFlows, inputFormat: o.inputFormat };
  const threaded = (name: string) => o.readThread !== false && name !== '-';
  // one reading thread for the files, in order: it goes on to the next file while this one's last
  // records are counted, and its compiled decoder stays warm from file to file; stdin is read here
  let thread: ReadingThread | null = null;
  let threadIndex = 0;
  for (let i = 0; i < inputs.length; i++) {
    const name = inputs[i]!;
    if (threaded(name) && (thread === null || thread.broken)) {
      thread = new ReadingThread(inputs.slice(i).filter(threaded), base);
      threadIndex = 0;
    }
    try {
      const hooks = { onProblem, onFormat: o.onFormat, onSource: (src: SourceProgress) => progress.watch(src) };
      const s = threaded(name)
        ? await thread!.run(threadIndex++, sink, { ...hooks, transient: o.recordsTransient })
        : await ingestInput(name, sink, { ...base, ...hooks });
      summaries.push(s);
      if (s.stoppedBy && s.stoppedBy.offset === 0 && s.packets === 0 && s.records === 0) unreadable.push(name);
    } catch (e) {
      progress.clear();
      process.stderr.write(`tidewatch: ${escapeControls((e as Error).message)}\n`);
      unreadable.push(name);
    } finally {
      progress.stop();
    }
  }
  return { summaries, unreadable };
}

/** The stderr summary of what was read. */
export function describeInputs(summaries: readonly IngestSummary[]): string[] {
  const lines: string[] = [];
  for (const s of summaries) {
    const span = Number.isFinite(s.firstMs) ? `${rfc3339(s.firstMs)} .. ${rfc3339(s.lastMs)}` : 'no data';
    const unit = s.format === 'pcap' || s.format === 'pcapng' ? `${s.packets} packets`
      : s.format === 'export-capture' ? `${s.packets} packets, ${s.records} records` : `${s.records} records`;
    lines.push(`${s.file} (${s.format}): ${unit}, ${s.bytes} bytes, ${s.flows} flows, ${span}${s.truncated ? ', TRUNCATED' : ''}`);
    const probs = Object.entries(s.problemCounts).filter(([, n]) => n > 0);
    if (probs.length > 0) lines.push(`  problems: ${probs.map(([k, n]) => `${k}=${n}`).join(', ')}`);
    for (const note of inputNotes(s)) lines.push(`  ${note}`);
  }
  return lines.map(escapeControls);
}
