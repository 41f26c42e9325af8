import type { Alert } from '../alert/alert.js';
import { alertToJson } from '../alert/serialize.js';
import { ConsoleSink } from '../sink/console.js';
import { JsonlWriter } from '../sink/jsonl.js';
import { RotatingFileSink } from '../sink/file.js';
import { usageError } from './exit.js';

export interface AlertOutputOptions {
  format?: string;
  out?: string;
  color?: boolean;
}

/**
 * Where alerts go: JSON lines on stdout when piped (or `--format jsonl`), coloured one-line summaries
 * when stdout is a terminal (or `--format pretty`), and `--out FILE` (JSON lines, appended) as well.
 */
export class AlertOutput {
  readonly counts = new Map<string, number>();
  total = 0;
  private jsonl: JsonlWriter | null = null;
  private pretty: ConsoleSink | null = null;
  private file: RotatingFileSink | null = null;

  constructor(o: AlertOutputOptions) {
    const format = o.format ?? (process.stdout.isTTY ? 'pretty' : 'jsonl');
    if (format !== 'jsonl' && format !== 'pretty') throw usageError(`--format: expected jsonl or pretty, got ${format}`);
    if (format === 'jsonl') this.jsonl = new JsonlWriter(process.stdout, { endOnClose: false });
    else this.pretty = new ConsoleSink(process.stdout, { color: o.color !== false });
    if (o.out) {
      try {
        this.file = new RotatingFileSink(o.out);
      } catch (e) {
        throw usageError(`--out ${o.out}: cannot open (${(e as NodeJS.ErrnoException).code ?? 'error'})`);
      }
    }
  }

  readonly emit = (a: Alert): void => {
    const line = alertToJson(a);
    this.jsonl?.writeLine(line);
    this.pretty?.write(a);
    this.file?.writeLine(line);
    if (a.state === 'open') {
      this.total++;
      this.counts.set(a.kind, (this.counts.get(a.kind) ?? 0) + 1);
    }
  };

  /** Per closed window: alerts of closed windows reach the disk. */
  sync(): void {
    this.file?.sync();
  }

  async close(): Promise<void> {
    this.file?.close();
    await this.jsonl?.flush();
  }
}
