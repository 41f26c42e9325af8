import { createWriteStream } from 'node:fs';
import type { Writable } from 'node:stream';

export interface JsonlWriterOptions {
  /** Bytes gathered before a chunk is handed to the stream. Default 1 MiB. */
  chunkBytes?: number;
  /** End the stream on close(). Default true; pass false for process.stdout. */
  endOnClose?: boolean;
}

/**
 * Buffered line writer: lines are copied into a large buffer and written in big chunks; when the
 * stream asks for a pause (write() returns false) further chunks wait, in order, for 'drain'.
 */
export class JsonlWriter {
  private readonly out: Writable;
  private readonly chunkBytes: number;
  private readonly endOnClose: boolean;
  private buf: Buffer;
  private used = 0;
  private readonly queue: Buffer[] = [];
  /** Chunks written whose callback has not come yet. */
  private inFlight = 0;
  private waitingDrain = false;
  private error: Error | undefined;
  private idleWaiters: (() => void)[] = [];
  /** Lines and bytes accepted so far. */
  lines = 0;
  bytes = 0;

  constructor(target: Writable | number, opts: JsonlWriterOptions = {}) {
    this.out = typeof target === 'number' ? createWriteStream('', { fd: target, autoClose: false }) : target;
    this.chunkBytes = opts.chunkBytes ?? 1 << 20;
    this.endOnClose = opts.endOnClose ?? true;
    this.buf = Buffer.allocUnsafe(this.chunkBytes);
    this.out.on('error', (e: Error) => {
      this.error ??= e;
      this.wakeIdle();
    });
  }

  /** Appends `line` and a newline; `line` must not contain a newline. */
  writeLine(line: string): void {
    const n = Buffer.byteLength(line) + 1;
    this.lines++;
    this.bytes += n;
    if (this.used + n > this.chunkBytes) this.cut();
    if (n > this.chunkBytes) {
      this.queue.push(Buffer.from(`${line}\n`));
      this.pump();
      return;
    }
    this.used += this.buf.write(line, this.used, 'utf8');
    this.buf[this.used++] = 0x0a;
  }

  /** Resolves when every line written so far has been accepted by the stream (write callbacks done). */
  async flush(): Promise<void> {
    this.cut();
    if (!this.idle()) await new Promise<void>((r) => this.idleWaiters.push(r));
    if (this.error) throw this.error;
  }

  /** Flushes, then ends the stream (unless endOnClose is false). */
  async close(): Promise<void> {
    await this.flush();
    if (!this.endOnClose) return;
    await new Promise<void>((resolve, reject) => {
      this.out.end((e?: Error | null) => (e ? reject(e) : resolve()));
    });
  }

  /** Moves the filled part of the buffer to the queue; a fresh buffer takes its place (chunks are few). */
  private cut(): void {
    if (this.used === 0) return;
    this.queue.push(this.buf.subarray(0, this.used));
    this.buf = Buffer.allocUnsafe(this.chunkBytes);
    this.used = 0;
    this.pump();
  }

  private pump(): void {
    while (!this.waitingDrain && !this.error) {
      const chunk = this.queue.shift();
      if (!chunk) break;
      this.inFlight++;
      const more = this.out.write(chunk, (e) => {
        this.inFlight--;
        if (e) this.error ??= e;
        this.wakeIfIdle();
      });
      if (!more) {
        this.waitingDrain = true;
        this.out.once('drain', () => {
          this.waitingDrain = false;
          this.pump();
        });
      }
    }
    this.wakeIfIdle();
  }

  private idle(): boolean {
    return this.error !== undefined || (this.queue.length === 0 && this.inFlight === 0 && !this.waitingDrain);
  }

  private wakeIfIdle(): void {
    if (this.idle()) this.wakeIdle();
  }

  private wakeIdle(): void {
    const ws = this.idleWaiters;
    this.idleWaiters = [];
    for (const w of ws) w();
  }
}
