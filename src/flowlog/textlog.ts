import { parse, type CsvError, type Parser } from 'csv-parse';
import { parse as parseSync } from 'csv-parse/sync';
import type { FlowRecord, FlowSink } from '../flow/record.js';
import { inputLabel, type ByteSource } from '../ingest/source.js';
import type { IngestOptions, IngestSummary, InputFormat } from '../ingest/types.js';
import { ProblemCounter } from '../util/problem.js';
import { canonicalKey, missingColumns } from './columns.js';
import { rowToFlow } from './row.js';

/** A line (CSV: a record) longer than this is reported and skipped, never buffered whole. */
export const MAX_LINE_BYTES = 1 << 20;

const NL = 0x0a, QUOTE = 0x22;

/**
 * Splits a byte stream into records at newlines (outside RFC 4180 quotes when `quotes` is set),
 * holding at most MAX_LINE_BYTES of a partial record. An over-long record is skipped up to its end
 * and then reported with its first line number and line count; while skipping, any newline ends it
 * (so an unbalanced quote cannot swallow the rest of the input).
 */
export class RecordSplitter {
  private carry = Buffer.alloc(0);
  private carryLen = 0;
  private inQuote = false;
  private skipping = false;
  /** Line number (1-based) where the current record starts, and newlines inside it so far. */
  private line = 1;
  private inner = 0;

  constructor(
    private readonly quotes: boolean,
    /** A whole record: bytes without the final newline, its first line, and how many lines it spans. */
    private readonly onRecord: (b: Buffer, start: number, end: number, line: number, lines: number) => void,
    private readonly onTooLong: (line: number, lines: number) => void,
  ) {}

  feed(chunk: Uint8Array): void {
    const c = Buffer.from(chunk.buffer, chunk.byteOffset, chunk.length);
    let seg = 0;
    for (let i = 0; i < c.length; i++) {
      const x = c[i]!;
      if (x === QUOTE && this.quotes && !this.skipping) this.inQuote = !this.inQuote;
      else if (x === NL) {
        if (this.inQuote) {
          if (this.carryLen + (i - seg) <= MAX_LINE_BYTES) { this.inner++; continue; }
          this.skipping = true; // already over-long inside a quote: this newline ends it
        }
        this.endRecord(c, seg, i);
        seg = i + 1;
      }
    }
    if (this.skipping) return;
    const rest = c.length - seg;
    if (this.carryLen + rest > MAX_LINE_BYTES) {
      this.tooLong();
      return;
    }
    if (this.carry.length < this.carryLen + rest) {
      const n = Buffer.alloc(Math.max(this.carryLen + rest, this.carry.length * 2, 4096));
      this.carry.copy(n, 0, 0, this.carryLen);
      this.carry = n;
    }
    c.copy(this.carry, this.carryLen, seg);
    this.carryLen += rest;
  }

  /** Flushes a final record without a trailing newline. */
  end(): void {
    if (this.skipping) this.onTooLong(this.line, this.inner + 1);
    else if (this.carryLen > 0) this.onRecord(this.carry, 0, this.carryLen, this.line, this.inner + 1);
    this.carryLen = 0;
  }

  private tooLong(): void {
    this.skipping = true;
    this.inQuote = false;
    this.carryLen = 0;
  }

  private endRecord(c: Buffer, seg: number, nl: number): void {
    const lines = this.inner + 1;
    if (this.skipping) {
      this.skipping = false;
      this.onTooLong(this.line, lines);
    } else if (this.carryLen + (nl - seg) > MAX_LINE_BYTES) {
      this.onTooLong(this.line, lines);
    } else if (this.carryLen > 0) {
      const whole = Buffer.concat([this.carry.subarray(0, this.carryLen), c.subarray(seg, nl)]);
      this.onRecord(whole, 0, whole.length, this.line, lines);
    } else {
      this.onRecord(c, seg, nl, this.line, lines);
    }
    this.carryLen = 0;
    this.inQuote = false;
    this.line += lines;
    this.inner = 0;
  }
}

/** A record's text: without a final CR, and without the UTF-8 BOM on the first line. */
export function recordText(b: Buffer, s: number, e: number, line: number): string {
  if (e > s && b[e - 1] === 0x0d) e--;
  if (line === 1 && e - s >= 3 && b[s] === 0xef && b[s + 1] === 0xbb && b[s + 2] === 0xbf) s += 3;
  return b.toString('utf8', s, e);
}

/** Shared bookkeeping of the text readers. */
export class TextIngest {
  readonly problems = new ProblemCounter();
  readonly exporter: string;
  records = 0; flows = 0; bytes = 0; firstMs = NaN; lastMs = NaN;
  constructor(readonly file: string, private sink: FlowSink, private opts: IngestOptions) {
    this.exporter = inputLabel(file);
  }

  bad(line: number, reason: string, message: string): void {
    this.problems.add(reason);
    this.opts.onProblem?.({ file: this.file, offset: -1, line, reason, message, fatal: false });
  }

  row(row: Record<string, unknown>, line: number, exporter = this.exporter): void {
    this.records++;
    const r = rowToFlow(row, exporter);
    if (typeof r === 'string') { this.bad(line, 'bad-line', r); return; }
    this.emit(r);
  }

  private emit(r: FlowRecord): void {
    this.flows++;
    this.bytes += r.bytes + r.rbytes;
    if (!(r.start >= this.firstMs)) this.firstMs = r.start;
    if (!(r.end <= this.lastMs)) this.lastMs = r.end;
    this.sink(r);
  }

  summary(format: InputFormat, counters: Record<string, number> = {}): IngestSummary {
    return {
      file: this.file, format, packets: this.records, records: this.records, bytes: this.bytes, flows: this.flows,
      firstMs: this.firstMs, lastMs: this.lastMs, problemCounts: this.problems.toObject(), truncated: false,
      counters: { lines: this.records, flows: this.flows, ...counters },
    };
  }
}

export const tooLongMessage = `line longer than ${MAX_LINE_BYTES} bytes skipped`;

/** Nesting levels of a JSON Lines object whose keys are read. */
const MAX_NESTING = 4;

/**
 * A JSON object's keys into `row` by canonical name. Keys of nested objects count by their own name
 * (`{"connection": {"src_ip": ...}}` gives `src`), as cloud flow logs nest them, but never replace a
 * key of an outer level.
 */
function flattenInto(row: Record<string, unknown>, obj: Record<string, unknown>, depth: number): void {
  const nested: Record<string, unknown>[] = [];
  for (const [k, x] of Object.entries(obj)) {
    if (typeof x === 'object' && x !== null && !Array.isArray(x)) { if (depth < MAX_NESTING) nested.push(x as Record<string, unknown>); }
    else if (depth === 0) row[canonicalKey(k)] = x;
    else { const c = canonicalKey(k); if (!(c in row)) row[c] = x; }
  }
  for (const n of nested) flattenInto(row, n, depth + 1);
}

/**
 * JSON Lines flow log: one object per line, keys FlowRecord names or IPFIX IE names. A blank line is
 * an invalid record (jsonlines.org; METHODS.md check value 39).
 */
export async function ingestJsonl(src: ByteSource, sink: FlowSink, opts: IngestOptions): Promise<IngestSummary> {
  const t = new TextIngest(src.name, sink, opts);
  const split = new RecordSplitter(false, (b, s, e, line) => {
    const text = recordText(b, s, e, line);
    let v: unknown;
    try {
      v = JSON.parse(text);
    } catch (err) {
      t.bad(line, 'bad-json', text.trim() === '' ? 'blank line' : `not JSON (${(err as Error).message})`);
      return;
    }
    if (typeof v !== 'object' || v === null || Array.isArray(v)) { t.bad(line, 'bad-json', 'not a JSON object'); return; }
    const row: Record<string, unknown> = {};
    flattenInto(row, v as Record<string, unknown>, 0);
    t.row(row, line);
  }, (line) => t.bad(line, 'line-too-long', tooLongMessage));
  for (let c = await src.read(); c !== null; c = await src.read()) split.feed(c);
  split.end();
  return t.summary('jsonl');
}

/** Column separators a CSV flow log may use; the header line decides (the one it holds most of, outside quotes). */
const SEPARATORS = [',', ';', '\t', '|'] as const;

/** The separator of a header line: the most frequent of SEPARATORS outside quotes, a comma on a tie or none. */
export function headerSeparator(line: string): string {
  const n = new Map<string, number>(SEPARATORS.map((c) => [c, 0]));
  let quoted = false;
  for (const ch of line) {
    if (ch === '"') quoted = !quoted;
    else if (!quoted && n.has(ch)) n.set(ch, n.get(ch)! + 1);
  }
  let best = ',';
  for (const c of SEPARATORS) if (n.get(c)! > n.get(best)!) best = c;
  return best;
}

/**
 * CSV flow log with a header row (RFC 4180 quoting, parsed by csv-parse as a stream); columns may be
 * separated by commas, semicolons, tabs or bars (the header line decides). Records longer than
 * MAX_LINE_BYTES never reach the parser: the splitter replaces them by as many empty lines, so the
 * parser's line numbers stay those of the file. A header naming none of the columns a flow needs
 * (columns.ts, missingColumns) stops the input with a one-line error, rather than one per line.
 */
export async function ingestCsv(src: ByteSource, sink: FlowSink, opts: IngestOptions): Promise<IngestSummary> {
  const t = new TextIngest(src.name, sink, opts);
  let parser: Parser | null = null;
  let consume: Promise<void> = Promise.resolve();
  let headerError: string | null = null, headerLine = 1;
  const start = (header: string) => {
    const delimiter = headerSeparator(header);
    let columns: string[] | undefined;
    try {
      columns = parseSync(header, { delimiter, bom: true, relax_quotes: true, relax_column_count: true })[0] as string[] | undefined;
    } catch (e) {
      headerError = `the header is not CSV (${(e as Error).message.split('\n')[0]})`;
      return;
    }
    const keys = (columns ?? []).map(canonicalKey);
    const why = missingColumns(keys);
    if (why) { headerError = why; return; }
    // the stream parser still reads the header line; its columns are the ones just checked
    const p = parse({
      bom: true, delimiter, columns: () => keys, relax_column_count: true, skip_empty_lines: true,
      trim: true, info: true, skip_records_with_error: true,
      on_skip: (err: CsvError | undefined) => {
        if (err) t.bad(Number((err as unknown as { lines?: number }).lines ?? -1), 'bad-csv', err.message.split('\n')[0]!);
      },
    });
    parser = p;
    consume = (async () => {
      for await (const item of p as AsyncIterable<{ record: Record<string, string>; info: { lines: number } }>) {
        t.row(item.record, item.info.lines);
      }
    })();
  };
  const pieces: Buffer[] = [];
  const NEWLINE = Buffer.from('\n');
  const split = new RecordSplitter(true, (b, s, e, line) => {
    if (parser === null && headerError === null) {
      const text = recordText(b, s, e, line);
      if (text.trim() !== '') { headerLine = line; start(text); }
    }
    pieces.push(Buffer.from(b.subarray(s, e)), NEWLINE);
  }, (line, lines) => {
    t.bad(line, 'line-too-long', tooLongMessage);
    pieces.push(Buffer.alloc(lines, '\n'));
  });
  const flush = async () => {
    const p = parser as Parser | null;
    if (p === null || pieces.length === 0) return;
    const ok = p.write(Buffer.concat(pieces));
    pieces.length = 0;
    if (!ok) await new Promise((r) => p.once('drain', r));
  };
  for (let c = await src.read(); c !== null && headerError === null; c = await src.read()) {
    split.feed(c);
    await flush();
  }
  if (headerError === null) split.end();
  if (headerError !== null) throw new Error(`${src.name}: line ${headerLine}: not a flow log: ${headerError}`);
  await flush();
  (parser as Parser | null)?.end();
  await consume;
  return t.summary('csv');
}
