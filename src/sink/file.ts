import { closeSync, fstatSync, fsyncSync, openSync, renameSync, rmSync, writeSync } from 'node:fs';

export interface FileSinkOptions {
  /** Rotate before a line would take the file past this size. Default 64 MiB. */
  maxBytes?: number;
  /** Rotated files kept (FILE.1 newest ... FILE.keep oldest). Default 5. */
  keep?: number;
  /** Bytes gathered before a write. Default 1 MiB. */
  chunkBytes?: number;
}

/**
 * `--out FILE`: appends lines, rotating by size to FILE.1 ... FILE.keep. Writes are synchronous and in
 * big chunks (a file has no backpressure to honour); `sync()` writes what is buffered and fsyncs, and
 * the caller calls it once per closed window so a crash loses at most one window of alerts.
 * A rotation never splits a line.
 */
export class RotatingFileSink {
  private fd: number;
  private fileBytes: number;
  private readonly maxBytes: number;
  private readonly keep: number;
  private readonly chunkBytes: number;
  private buf: Buffer;
  private used = 0;
  rotations = 0;

  constructor(readonly path: string, opts: FileSinkOptions = {}) {
    this.maxBytes = opts.maxBytes ?? 64 << 20;
    this.keep = opts.keep ?? 5;
    this.chunkBytes = opts.chunkBytes ?? 1 << 20;
    this.buf = Buffer.allocUnsafe(this.chunkBytes);
    this.fd = openSync(path, 'a');
    this.fileBytes = fstatSync(this.fd).size;
  }

  writeLine(line: string): void {
    const n = Buffer.byteLength(line) + 1;
    if (this.fileBytes + this.used > 0 && this.fileBytes + this.used + n > this.maxBytes) {
      this.writeBuffered();
      this.rotate();
    }
    if (this.used + n > this.chunkBytes) this.writeBuffered();
    if (n > this.chunkBytes) {
      this.writeAll(Buffer.from(`${line}\n`));
      return;
    }
    this.used += this.buf.write(line, this.used, 'utf8');
    this.buf[this.used++] = 0x0a;
  }

  /** Writes what is buffered and asks the OS to put it on disk. */
  sync(): void {
    this.writeBuffered();
    fsyncSync(this.fd);
  }

  close(): void {
    this.sync();
    closeSync(this.fd);
  }

  private writeBuffered(): void {
    if (this.used === 0) return;
    this.writeAll(this.buf.subarray(0, this.used));
    this.used = 0;
  }

  private writeAll(b: Buffer): void {
    let off = 0;
    while (off < b.length) off += writeSync(this.fd, b, off, b.length - off);
    this.fileBytes += b.length;
  }

  /** FILE.(keep-1) -> FILE.keep, ..., FILE -> FILE.1; the oldest beyond `keep` is removed. */
  private rotate(): void {
    fsyncSync(this.fd);
    closeSync(this.fd);
    if (this.keep > 0) {
      rmSync(`${this.path}.${this.keep}`, { force: true });
      for (let i = this.keep - 1; i >= 1; i--) renameIfExists(`${this.path}.${i}`, `${this.path}.${i + 1}`);
      renameSync(this.path, `${this.path}.1`);
    } else {
      rmSync(this.path, { force: true });
    }
    this.fd = openSync(this.path, 'a');
    this.fileBytes = 0;
    this.rotations++;
  }
}

function renameIfExists(from: string, to: string): void {
  try {
    renameSync(from, to);
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code !== 'ENOENT') throw e;
  }
}
