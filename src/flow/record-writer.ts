import type { Writable } from 'node:stream';
import { FLOW_CSV_HEADER, flowToCsv } from './format.js';
import { JsonLineEncoder } from './json-bytes.js';
import type { FlowRecord } from './record.js';

export type FlowOutputFormat = 'jsonl' | 'csv';

/** Output is handed to the stream in chunks of about this many bytes. */
const CHUNK_BYTES = 1 << 20;

/**
 * Writes FlowRecords as JSON lines or CSV in large chunks (never a write per line). Records arrive from
 * a synchronous sink, so the writer cannot pause its producer mid-input: when the stream reports a full
 * buffer the chunk stays queued in the stream and `drained()` lets the caller wait between inputs and
 * at the end. (On Linux, stdout to a file or pipe writes synchronously, so the producer is held anyway.)
 */
export class FlowRecordWriter {
  private readonly json: JsonLineEncoder | null;
  private parts: string[] = [];
  private size = 0;
  private blocked = false;
  records = 0;

  constructor(private readonly out: Writable, format: FlowOutputFormat) {
    this.json = format === 'jsonl' ? new JsonLineEncoder(CHUNK_BYTES + 4096) : null;
    if (!this.json) this.pushLine(FLOW_CSV_HEADER);
  }

  /** A FlowSink: bind with `(r) => writer.write(r)`. */
  write(r: FlowRecord): void {
    this.records++;
    if (this.json) {
      this.json.write(r);
      if (this.json.length >= CHUNK_BYTES) this.flush();
    } else {
      this.pushLine(flowToCsv(r));
    }
  }

  /** Hands what was gathered to the stream. */
  flush(): void {
    let chunk: Buffer | string;
    if (this.json) {
      if (this.json.length === 0) return;
      chunk = this.json.take();
    } else {
      if (this.parts.length === 0) return;
      chunk = this.parts.join('\n') + '\n';
      this.parts = [];
      this.size = 0;
    }
    if (!this.out.write(chunk)) this.blocked = true;
  }

  /** Flushes, then resolves once the stream has room again. */
  async drained(): Promise<void> {
    this.flush();
    if (!this.blocked) return;
    await new Promise<void>((resolve) => this.out.once('drain', resolve));
    this.blocked = false;
  }

  private pushLine(line: string): void {
    this.parts.push(line);
    this.size += line.length + 1;
    if (this.size >= CHUNK_BYTES) this.flush();
  }
}
