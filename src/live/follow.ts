import { open, stat, type FileHandle } from 'node:fs/promises';
import type { FlowSink } from '../flow/record.js';
import type { ByteSource } from '../ingest/source.js';
import { sniffFormat } from '../ingest/sniff.js';
import { DEFAULT_INGEST, type IngestOptions } from '../ingest/types.js';
import { ingestCsv, ingestJsonl } from '../flowlog/textlog.js';
import { ingestVpcFlowLog } from '../flowlog/vpclog.js';
import type { InputProblem } from '../util/problem.js';

/** How often a followed file is looked at when it has not grown (ours, no source). */
export const FOLLOW_POLL_MS = 250;
const READ_BYTES = 1 << 20;

export type FollowEnd = 'rotated' | 'truncated' | 'stopped';

export interface FollowStats {
  /** Files (generations) read so far: 1 + rotations + truncations once reading began. */
  files: number;
  rotations: number;
  truncations: number;
  records: number;
  problems: number;
}

export interface FollowOptions {
  windowMs: number;
  pollMs?: number;
  onProblem?: (p: InputProblem) => void;
  /** Told when the file was replaced or cut, before the new content is read. */
  onRestart?: (why: 'rotated' | 'truncated') => void;
}

/**
 * One generation of a followed file as a ByteSource that waits for more instead of ending. It ends
 * (read() returns null) when the path now names another file and the old one is read to its end
 * (rotation by rename), when the file became shorter than what was read (truncation in place), or on
 * stop().
 */
class GrowingFileSource implements ByteSource {
  readonly size = -1;
  ended: FollowEnd | null = null;
  private pos = 0;
  private readonly buf = Buffer.allocUnsafe(READ_BYTES);
  private wake: (() => void) | null = null;
  private stopping = false;

  constructor(readonly name: string, private readonly fh: FileHandle, private readonly ino: number, private readonly pollMs: number) {}

  consumed(): number { return this.pos; }

  async read(): Promise<Uint8Array | null> {
    for (;;) {
      if (this.stopping) return this.end('stopped');
      const { bytesRead } = await this.fh.read(this.buf, 0, this.buf.length, this.pos);
      if (bytesRead > 0) {
        this.pos += bytesRead;
        return this.buf.subarray(0, bytesRead);
      }
      const now = await stat(this.name).catch(() => null);
      // renamed away: the writer may still finish its last lines into the old file, read them first
      if (now && now.ino !== this.ino) {
        const last = await this.fh.read(this.buf, 0, this.buf.length, this.pos);
        if (last.bytesRead > 0) { this.pos += last.bytesRead; return this.buf.subarray(0, last.bytesRead); }
        return this.end('rotated');
      }
      if (now && now.size < this.pos) return this.end('truncated');
      await new Promise<void>((r) => {
        const timer = setTimeout(r, this.pollMs);
        this.wake = () => { clearTimeout(timer); r(); };
      });
      this.wake = null;
    }
  }

  stop(): void {
    this.stopping = true;
    this.wake?.();
  }

  async close(): Promise<void> { await this.fh.close(); }

  private end(why: FollowEnd): null {
    this.ended = why;
    return null;
  }
}

/** Puts the first chunk back in front of a source after sniffing it. */
function withHead(src: ByteSource, head: Uint8Array): ByteSource {
  let first: Uint8Array | null = head;
  return {
    name: src.name, size: src.size, consumed: () => src.consumed(), close: () => src.close(),
    read: async () => {
      if (first) { const h = first; first = null; return h; }
      return src.read();
    },
  };
}

/**
 * `--follow FILE`: reads a CSV, JSON-lines or VPC flow log from its start and then as it grows, surviving
 * rotation (the file renamed away and a new one created: the old one is finished first) and
 * truncation (read again from the start). Each generation is read by the file ingest of its format
 * (flowlog/textlog.ts), so a rotated CSV file's new header is a header again. Runs until stop().
 */
export class FileFollower {
  readonly stats: FollowStats = { files: 0, rotations: 0, truncations: 0, records: 0, problems: 0 };
  private current: GrowingFileSource | null = null;
  private stopped = false;
  private wake: (() => void) | null = null;
  private missingReported = false;

  constructor(readonly path: string, private readonly sink: FlowSink, private readonly opts: FollowOptions) {}

  /** Follows until stop(); resolves once the last generation's ingest has finished. */
  async run(): Promise<void> {
    const pollMs = this.opts.pollMs ?? FOLLOW_POLL_MS;
    const count: FlowSink = (r) => { this.stats.records++; this.sink(r); };
    const onProblem = (p: InputProblem) => { this.stats.problems++; this.opts.onProblem?.(p); };
    const ingest: IngestOptions = { ...DEFAULT_INGEST, windowMs: this.opts.windowMs, onProblem };
    while (!this.stopped) {
      const src = await this.openGeneration(pollMs, onProblem);
      if (!src) { await this.sleep(pollMs); continue; }
      this.current = src;
      const head = await src.read();
      if (head) {
        const format = sniffFormat(head);
        if (format === 'jsonl' || format === 'csv' || format === 'vpc-flowlog') {
          const copy = Uint8Array.from(head);
          const read = format === 'jsonl' ? ingestJsonl : format === 'csv' ? ingestCsv : ingestVpcFlowLog;
          await read(withHead(src, copy), count, ingest);
        } else {
          onProblem({ file: this.path, offset: 0, reason: 'not-a-flow-log', message: '--follow reads CSV, JSON-lines and VPC flow logs only; waiting for the file to be replaced', fatal: false });
          // drain this generation without reading records, until it is replaced, cut or stopped
          while (await src.read() !== null);
        }
      }
      await src.close();
      this.current = null;
      if (src.ended === 'rotated') { this.stats.rotations++; this.opts.onRestart?.('rotated'); }
      else if (src.ended === 'truncated') { this.stats.truncations++; this.opts.onRestart?.('truncated'); }
    }
  }

  stop(): void {
    this.stopped = true;
    this.current?.stop();
    this.wake?.();
  }

  private async openGeneration(pollMs: number, onProblem: (p: InputProblem) => void): Promise<GrowingFileSource | null> {
    let fh: FileHandle;
    try {
      fh = await open(this.path, 'r');
    } catch (e) {
      if (!this.missingReported) {
        this.missingReported = true;
        const code = (e as NodeJS.ErrnoException).code ?? 'error';
        onProblem({ file: this.path, offset: -1, reason: 'cannot-open', message: `cannot open (${code}); waiting for it to appear`, fatal: false });
      }
      return null;
    }
    this.missingReported = false;
    const st = await fh.stat();
    this.stats.files++;
    return new GrowingFileSource(this.path, fh, st.ino, pollMs);
  }

  private sleep(ms: number): Promise<void> {
    return new Promise<void>((r) => {
      const timer = setTimeout(r, ms);
      this.wake = () => { clearTimeout(timer); r(); };
    });
  }
}
