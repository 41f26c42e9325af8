import type { Command } from 'commander';
import { FlowRecordWriter, type FlowOutputFormat } from '../flow/record-writer.js';
import { inputNotes } from '../ingest/hints.js';
import { ingestInput } from '../ingest/index.js';
import { DEFAULT_INGEST, INPUT_FORMATS, type IngestOptions, type IngestSummary, type InputFormat } from '../ingest/types.js';
import { formatProblem, type InputProblem } from '../util/problem.js';
import { parseDuration, rfc3339 } from '../util/time.js';
import { inputError, usageError } from './exit.js';
import { Progress } from './progress.js';
import { escapeControls } from '../sink/console.js';
import { formatCapCounts } from '../util/caps.js';
import { inputCapCounts } from './cap-counts.js';
import {
  addCollectorOptions, formatCollectorSummary, formatListening, runCollectorForFlows, wantsCollector, type CollectorCliOptions,
} from '../flowlog/cli-options.js';

const CONTROLS = /[\u0000-\u001f\u007f-\u009f\u2028\u2029]/;

/** Problems printed one per line on stderr; the rest are only counted. */
const PRINTED_PROBLEMS = 20;

interface FlowsOptions extends CollectorCliOptions {
  format: string;
  window?: string;
  idleTimeout?: string;
  activeTimeout?: string;
  maxFlows?: string;
  inputFormat?: string;
  quiet?: boolean;
}

/** `tidewatch flows INPUT...`: prints FlowRecords (DESIGN.md section 3) as JSON lines or CSV. */
export function register(program: Command): void {
  const cmd = program
    .command('flows')
    .description('print the flow records of captures or flow exports (JSON lines or CSV) on stdout')
    .argument('[input...]', 'capture or flow export files (format sniffed from content), - for stdin')
    .option('--format <fmt>', 'output format: jsonl or csv', 'jsonl')
    .option('--window <seconds>', 'cut flow updates at multiples of this (0 = no cuts)', '60')
    .option('--idle-timeout <seconds>', 'end a flow after this long without packets', '60')
    .option('--active-timeout <seconds>', 'cut a long flow into updates this often', '300')
    .option('--max-flows <n>', 'flows held at once; the least recently seen are evicted beyond it', String(DEFAULT_INGEST.maxFlows))
    .option('--input-format <fmt>', `skip sniffing: ${INPUT_FORMATS.join(', ')}`)
    .option('--quiet', 'no summary or problem lines on stderr');
  addCollectorOptions(cmd).action(async (inputs: string[], o: FlowsOptions) => {
    if (wantsCollector(o)) {
      if (inputs.length > 0) throw usageError('give input files or a listener (--ipfix-listen, --netflow-listen), not both');
      await runListener(o);
    } else {
      if (inputs.length === 0) throw usageError('no input: give files, - for stdin, or --ipfix-listen / --netflow-listen');
      await runFlows(inputs, o);
    }
  });
}

/** `flows --ipfix-listen / --netflow-listen`: records as they arrive until SIGINT/SIGTERM or --duration. */
async function runListener(o: FlowsOptions): Promise<void> {
  if (o.format !== 'jsonl' && o.format !== 'csv') throw usageError(`--format must be jsonl or csv, not ${o.format}`);
  const writer = new FlowRecordWriter(process.stdout, o.format as FlowOutputFormat);
  let stats;
  try {
    stats = await runCollectorForFlows(o, (r) => writer.write(r), {
      onProblem: (p) => { if (!o.quiet) process.stderr.write(`${escapeControls(formatProblem(p))}\n`); },
      tick: () => writer.flush(),
      onListening: (a) => { if (!o.quiet) process.stderr.write(`tidewatch flows: ${formatListening(a)}\n`); },
    });
  } catch (e) {
    throw usageError(escapeControls(e instanceof Error ? e.message : String(e)));
  }
  writer.flush();
  await writer.drained();
  if (!o.quiet) process.stderr.write(`${formatCollectorSummary(stats)}\n`);
}

async function runFlows(inputs: string[], o: FlowsOptions): Promise<void> {
  if (o.format !== 'jsonl' && o.format !== 'csv') throw usageError(`--format must be jsonl or csv, not ${o.format}`);
  const problems = { printed: 0, more: 0 };
  // records printed on the same terminal would break a redrawn line: progress only when stdout goes elsewhere
  const progress = new Progress({ quiet: o.quiet === true || process.stdout.isTTY === true });
  const onProblem = (p: InputProblem) => {
    // a fatal problem at the first byte is the exit line instead
    if (o.quiet || (p.fatal && p.offset === 0)) return;
    if (problems.printed < PRINTED_PROBLEMS) {
      problems.printed++;
      progress.clear();
      process.stderr.write(`${escapeControls(formatProblem(p))}\n`);
    } else problems.more++;
  };
  const opts: IngestOptions = { ...ingestOptions(o), onProblem, onSource: (src) => progress.watch(src) };
  // the reader of our output went away (`| head`): nothing more to do, as with SIGPIPE in C tools
  process.stdout.on('error', (e: NodeJS.ErrnoException) => {
    if (e.code === 'EPIPE') process.exit(0);
    throw e;
  });
  const writer = new FlowRecordWriter(process.stdout, o.format as FlowOutputFormat);
  // flow logs name their own exporter: on a terminal its control characters are escaped
  const tty = process.stdout.isTTY === true;
  const sink = (r: Parameters<FlowRecordWriter['write']>[0]) => writer.write(tty && CONTROLS.test(r.exporter) ? { ...r, exporter: escapeControls(r.exporter) } : r);
  const summaries: IngestSummary[] = [];
  for (const name of inputs) {
    let summary: IngestSummary;
    try {
      summary = await ingestInput(name, sink, opts);
    } catch (e) {
      await writer.drained();
      // ingestInput throws one-line errors only for inputs it cannot open or recognise
      throw inputError(escapeControls(e instanceof Error ? e.message : String(e)));
    } finally {
      progress.stop();
    }
    await writer.drained();
    if (summary.stoppedBy && summary.stoppedBy.offset === 0) {
      throw inputError(escapeControls(`${name}: ${summary.stoppedBy.message}`));
    }
    summaries.push(summary);
    if (!o.quiet) process.stderr.write(summaryText(name, summary).split('\n').map(escapeControls).join('\n'));
  }
  if (!o.quiet) process.stderr.write(`${formatCapCounts(inputCapCounts(summaries))}\n`);
  if (problems.more > 0 && !o.quiet) process.stderr.write(`tidewatch flows: ${problems.more} more problems not shown\n`);
}

function ingestOptions(o: FlowsOptions): IngestOptions {
  const opts: IngestOptions = {
    windowMs: seconds('--window', o.window, true),
    idleTimeoutMs: seconds('--idle-timeout', o.idleTimeout, false),
    activeTimeoutMs: seconds('--active-timeout', o.activeTimeout, false),
    maxFlows: DEFAULT_INGEST.maxFlows,
  };
  if (o.maxFlows !== undefined) {
    const n = Number(o.maxFlows);
    if (!Number.isInteger(n) || n < 1) throw usageError(`--max-flows must be a positive integer, not ${o.maxFlows}`);
    opts.maxFlows = n;
  }
  if (o.inputFormat !== undefined) {
    if (!(INPUT_FORMATS as readonly string[]).includes(o.inputFormat)) {
      throw usageError(`--input-format must be one of ${INPUT_FORMATS.join(', ')}, not ${o.inputFormat}`);
    }
    opts.inputFormat = o.inputFormat as InputFormat;
  }
  return opts;
}

/** A duration option in seconds (plain number, or with a unit: 500ms, 90s, 5m); milliseconds. */
function seconds(flag: string, text: string | undefined, zeroOk: boolean): number {
  const ms = parseDuration(text ?? '');
  if (!Number.isFinite(ms) || ms < 0 || (ms === 0 && !zeroOk)) {
    throw usageError(`${flag} must be a ${zeroOk ? 'non-negative' : 'positive'} number of seconds, not ${text}`);
  }
  return ms;
}

function summaryText(name: string, s: IngestSummary): string {
  const span = Number.isFinite(s.firstMs) ? `${rfc3339(s.firstMs)} .. ${rfc3339(s.lastMs)}` : 'no flows';
  const unit = s.format === 'pcap' || s.format === 'pcapng' ? 'packets' : s.format === 'export-capture' ? `packets, ${s.records} records` : 'records';
  const lines = [`${name}: ${s.format}, ${s.packets} ${unit}, ${s.bytes} bytes, ${s.flows} flow records, ${span}`];
  for (const note of inputNotes(s)) lines.push(`${name}: ${note}`);
  const problems = Object.entries(s.problemCounts);
  if (problems.length > 0) lines.push(`${name}: problems: ${problems.map(([k, n]) => `${k} ${n}`).join(', ')}`);
  const dropped = s.counters.droppedByCapture ?? 0;
  if (dropped > 0) lines.push(`${name}: the capture lost ${dropped} packets (interface statistics): volumes are low`);
  if (s.counters.untimed) lines.push(`${name}: some packets carry no timestamp and were given the previous one`);
  if (s.truncated) lines.push(`${name}: truncated: the input ends inside a record; everything before it was read`);
  if (s.stoppedBy) lines.push(`${name}: stopped at byte ${s.stoppedBy.offset}: ${s.stoppedBy.message}`);
  return lines.join('\n') + '\n';
}
