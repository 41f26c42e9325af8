import type { Writable } from 'node:stream';
import { FLOW_CSV_HEADER, flowToCsv, flowToJson } from './format.js';
import type { FlowRecord } from './record.js';

export type FlowOutputFormat = 'jsonl' | 'csv';

/** Lines are gathered into chunks of about this many characters before one write. */
const CHUNK_CHARS = 1 << 20;

/**
 * Writes FlowRecords as JSON lines or CSV in large chunks (never a write per line). Records arrive from
 * a synchronous sink, so the writer cannot pause its producer mid-input: when the stream reports a full
 * buffer the chunk stays queued in the stream and `drained()` lets the caller wait between inputs and
 * at the end. (On Linux, stdout to a file or pipe writes synchronously, so the producer is held anyway.)
 */
export class FlowRecordWriter {
  private parts: string[] = [];
  private size = 0;
  private blocked = false;
  records = 0;

  constructor(private readonly out: Writable, private readonly format: FlowOutputFormat) {
    if (format === 'csv') this.push(FLOW_CSV_HEADER);
  }

  /** A FlowSink: bind with `(r) => writer.write(r)`. */
  write(r: FlowRecord): void {
    this.records++;
    this.push(this.format === 'csv' ? flowToCsv(r) : flowToJson(r));
  }

  /** Hands the gathered lines to the stream. */
  flush(): void {
    if (this.parts.length === 0) return;
    const chunk = this.parts.join('\n') + '\n';
    this.parts = [];
    this.size = 0;
    if (!this.out.write(chunk)) this.blocked = true;
  }

  /** Flushes, then resolves once the stream has room again. */
  async drained(): Promise<void> {
    this.flush();
    if (!this.blocked) return;
    await new Promise<void>((resolve) => this.out.once('drain', resolve));
    this.blocked = false;
  }

  private push(line: string): void {
    this.parts.push(line);
    this.size += line.length + 1;
    if (this.size >= CHUNK_CHARS) this.flush();
  }
}
