import { open, type FileHandle } from 'node:fs/promises';
import { basename } from 'node:path';
import { createGunzip } from 'node:zlib';
import type { Readable } from 'node:stream';

/** Reads are at least this large for files (issue: >= 1 MiB sequential reads). */
export const CHUNK_BYTES = 4 * 1024 * 1024;

/**
 * A pull source of bytes. `read()` returns the next chunk, or null at the end. A returned chunk stays
 * valid only until the next `read()` (files reuse one buffer): readers that need bytes across chunks copy
 * just the straddling tail.
 */
export interface ByteSource {
  /** Name as the user gave it (`-` for stdin). */
  readonly name: string;
  /** Total size when known (files), for progress; -1 otherwise. */
  readonly size: number;
  /** Bytes of the underlying input consumed so far (compressed bytes for .gz), for progress. */
  consumed(): number;
  read(): Promise<Uint8Array | null>;
  close(): Promise<void>;
}

/** Short name used in FlowRecord.exporter for capture inputs. */
export function inputLabel(name: string): string {
  return name === '-' ? 'stdin' : basename(name);
}

/**
 * Two buffers: while the reader works through one chunk the next is already being read into the other
 * (the read runs on libuv's thread pool), so the parse loop does not wait on the copy out of the page
 * cache. The chunk handed out is only overwritten after the following `read()` call, as the contract says.
 */
class FileSource implements ByteSource {
  private readonly bufs = [Buffer.allocUnsafe(CHUNK_BYTES), Buffer.allocUnsafe(CHUNK_BYTES)];
  private next = 0;
  private pos = 0;
  private ahead: Promise<number> | null = null;
  private ended = false;
  constructor(readonly name: string, private fh: FileHandle, readonly size: number) {}
  consumed(): number { return this.pos; }
  private fill(i: number): Promise<number> {
    return this.fh.read(this.bufs[i]!, 0, CHUNK_BYTES, null).then((r) => r.bytesRead);
  }
  async read(): Promise<Uint8Array | null> {
    if (this.ended) return null;
    const i = this.next;
    const bytesRead = await (this.ahead ?? this.fill(i));
    this.ahead = null;
    if (bytesRead === 0) { this.ended = true; return null; }
    this.pos += bytesRead;
    this.next = 1 - i;
    // a short read of a regular file is its end: no read ahead past it
    if (bytesRead === CHUNK_BYTES || this.size < 0) {
      const p = this.fill(this.next);
      p.catch(() => {}); // surfaced by the read() that awaits it
      this.ahead = p;
    }
    return this.bufs[i]!.subarray(0, bytesRead);
  }
  async close(): Promise<void> {
    const p = this.ahead;
    this.ahead = null;
    if (p) await p.catch(() => 0);
    await this.fh.close();
  }
}

/** Wraps a Node readable stream; coalesces small chunks (pipes deliver 64 KiB) up to CHUNK_BYTES. */
export class StreamSource implements ByteSource {
  readonly size: number = -1;
  private it: AsyncIterator<Buffer>;
  private pos = 0;
  private pending: Buffer | null = null;
  private done = false;
  constructor(readonly name: string, stream: Readable, private countRaw?: () => number) {
    this.it = stream[Symbol.asyncIterator]() as AsyncIterator<Buffer>;
  }
  consumed(): number { return this.countRaw ? this.countRaw() : this.pos; }
  async read(): Promise<Uint8Array | null> {
    if (this.pending) { const p = this.pending; this.pending = null; this.pos += p.length; return p; }
    if (this.done) return null;
    const r = await this.it.next();
    if (r.done) { this.done = true; return null; }
    this.pos += r.value.length;
    return r.value;
  }
  /** Puts a chunk back so the next read returns it (used after sniffing). */
  unread(chunk: Buffer): void { this.pending = chunk; this.pos -= chunk.length; }
  async close(): Promise<void> { await this.it.return?.(); }
}

/** Opens a file path or `-` (stdin). Throws a one-line Error naming the file when it cannot be opened. */
export async function openSource(name: string): Promise<ByteSource> {
  if (name === '-') return new StreamSource('-', process.stdin);
  let fh: FileHandle;
  try {
    fh = await open(name, 'r');
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code ?? 'error';
    throw new Error(`${name}: cannot open (${code})`);
  }
  const st = await fh.stat();
  if (st.isDirectory()) { await fh.close(); throw new Error(`${name}: is a directory`); }
  return new FileSource(name, fh, st.isFile() ? st.size : -1);
}

/**
 * Peeks at least `n` leading bytes without losing them; returns the first `n` peeked bytes (copy),
 * everything read to get them (`read`: at least one whole chunk) and a source that replays it all.
 */
export async function peekSource(src: ByteSource, n: number): Promise<{ head: Uint8Array; read: Uint8Array; source: ByteSource }> {
  const parts: Uint8Array[] = [];
  let have = 0;
  while (have < n) {
    const c = await src.read();
    if (!c) break;
    const copy = new Uint8Array(c); // a copy (typed-array to typed-array); from() would go element by element
    parts.push(copy);
    have += copy.length;
  }
  const head = new Uint8Array(have);
  let o = 0;
  for (const p of parts) { head.set(p, o); o += p.length; }
  let replay: Uint8Array | null = have > 0 ? head : null;
  const source: ByteSource = {
    name: src.name,
    size: src.size,
    consumed: () => src.consumed(),
    read: async () => {
      if (replay) { const r = replay; replay = null; return r; }
      return src.read();
    },
    close: () => src.close(),
  };
  return { head: head.subarray(0, Math.min(have, n)), read: head, source };
}

/** Decompresses a gzip ByteSource on the fly. */
export function gunzipSource(src: ByteSource): ByteSource {
  const gz = createGunzip();
  (async () => {
    try {
      for (;;) {
        const c = await src.read();
        if (!c) break;
        if (!gz.write(Buffer.from(c))) await new Promise((r) => gz.once('drain', r));
      }
      gz.end();
    } catch (e) {
      gz.destroy(e as Error);
    }
  })();
  const s = new StreamSource(src.name, gz, () => src.consumed());
  return Object.assign(s, { size: src.size, close: async () => { gz.destroy(); await src.close(); } });
}
