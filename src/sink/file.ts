import { closeSync, fstatSync, fsyncSync, ftruncateSync, openSync, renameSync, rmSync, writeSync } from 'node:fs';

export interface FileSinkOptions {
  /** Rotate before a line would take the file past this size. Default 64 MiB. */
  maxBytes?: number;
  /** Rotated files kept (FILE.1 newest ... FILE.keep oldest). Default 5. */
  keep?: number;
  /** Bytes gathered before a write. Default 1 MiB. */
  chunkBytes?: number;
  /** Told once, in one line, when writing fails (disk full, file size limit, I/O error). Default: stderr. */
  onError?: (message: string) => void;
}

/**
 * `--out FILE`: appends lines, rotating by size to FILE.1 ... FILE.keep. Writes are synchronous and in
 * big chunks (a file has no backpressure to honour); `sync()` writes what is buffered and fsyncs, and
 * the caller calls it once per closed window so a crash loses at most one window of alerts.
 * A rotation never splits a line.
 *
 * A failing write (ENOSPC, EFBIG, EIO) never throws: the file is cut back to its last whole line, the
 * sink stops writing, says so once, and counts the lines it could not write. `linesWritten` lines are
 * in the file, whole.
 */
export class RotatingFileSink {
  private fd: number;
  private fileBytes: number;
  private readonly maxBytes: number;
  private readonly keep: number;
  private readonly chunkBytes: number;
  private buf: Buffer;
  private used = 0;
  /** Lines in `buf`, and the file size after the last whole write (for cutting back a partial one). */
  private bufLines = 0;
  private wholeBytes: number;
  rotations = 0;
  linesWritten = 0;
  /** Lines not written after a failure. */
  linesLost = 0;
  /** The error that stopped the sink (errno code), or null while it works. */
  failed: string | null = null;
  private readonly onError: (message: string) => void;

  constructor(readonly path: string, opts: FileSinkOptions = {}) {
    this.maxBytes = opts.maxBytes ?? 64 << 20;
    this.keep = opts.keep ?? 5;
    this.chunkBytes = opts.chunkBytes ?? 1 << 20;
    this.buf = Buffer.allocUnsafe(this.chunkBytes);
    this.onError = opts.onError ?? ((m) => process.stderr.write(`tidewatch: ${m}\n`));
    this.fd = openSync(path, 'a');
    this.fileBytes = fstatSync(this.fd).size;
    this.wholeBytes = this.fileBytes;
  }

  writeLine(line: string): void {
    if (this.failed) { this.linesLost++; return; }
    this.guard(() => {
      const n = Buffer.byteLength(line) + 1;
      if (this.fileBytes + this.used > 0 && this.fileBytes + this.used + n > this.maxBytes) {
        this.writeBuffered();
        this.rotate();
      }
      if (this.used + n > this.chunkBytes) this.writeBuffered();
      if (n > this.chunkBytes) {
        this.writeAll(Buffer.from(`${line}\n`), 1);
        return;
      }
      this.used += this.buf.write(line, this.used, 'utf8');
      this.buf[this.used++] = 0x0a;
      this.bufLines++;
    });
  }

  /** Writes what is buffered and asks the OS to put it on disk. */
  sync(): void {
    if (this.failed) return;
    this.guard(() => {
      this.writeBuffered();
      fsyncSync(this.fd);
    });
  }

  close(): void {
    this.sync();
    if (this.fd >= 0) closeSync(this.fd);
    this.fd = -1;
  }

  private writeBuffered(): void {
    if (this.used === 0) return;
    this.writeAll(this.buf.subarray(0, this.used), this.bufLines);
    this.used = 0;
    this.bufLines = 0;
  }

  private writeAll(b: Buffer, lines: number): void {
    let off = 0;
    while (off < b.length) off += writeSync(this.fd, b, off, b.length - off);
    this.fileBytes += b.length;
    this.wholeBytes = this.fileBytes;
    this.linesWritten += lines;
  }

  /** Runs a write step; on failure cuts the file back to whole lines and stops the sink. */
  private guard(step: () => void): void {
    try {
      step();
    } catch (e) {
      const code = (e as NodeJS.ErrnoException).code ?? 'error';
      this.failed = code;
      this.linesLost += this.bufLines + 1;
      this.used = 0;
      this.bufLines = 0;
      try { ftruncateSync(this.fd, this.wholeBytes); } catch { /* the file stays as the OS left it */ }
      try { closeSync(this.fd); } catch { /* already gone */ }
      this.fd = -1;
      this.onError(`${this.path}: write failed (${(e as Error).message.split(",")[0]}); `
        + `${this.linesWritten} lines are in the file, whole; further lines go to the other outputs only`);
    }
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
    this.wholeBytes = 0;
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
