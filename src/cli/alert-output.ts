import type { Alert } from '../alert/alert.js';
import { alertToJson } from '../alert/serialize.js';
import { ConsoleSink } from '../sink/console.js';
import { JsonlWriter } from '../sink/jsonl.js';
import { RotatingFileSink } from '../sink/file.js';
import { openSyslogSink, parseSyslogTarget, type SyslogSink, type SyslogStats } from '../sink/syslog.js';
import { usageError } from './exit.js';

export interface AlertOutputOptions {
  format?: string;
  out?: string;
  color?: boolean;
  /** `udp://HOST:PORT` or `tcp://HOST:PORT` targets; each gets every line as an RFC 5424 message. */
  syslog?: readonly string[];
  /** Live runs: stdout lines are pushed out at every closed window rather than held until 1 MiB gathers. */
  live?: boolean;
}

export interface SyslogTargetStats extends SyslogStats { target: string }

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
  private readonly syslog: { target: string; sink: SyslogSink }[] = [];
  private readonly live: boolean;

  constructor(o: AlertOutputOptions) {
    this.live = o.live === true;
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
    for (const target of o.syslog ?? []) {
      try {
        parseSyslogTarget(target);
      } catch (e) {
        throw usageError(`--syslog: ${(e as Error).message}`);
      }
    }
    for (const target of o.syslog ?? []) this.syslog.push({ target, sink: openSyslogSink(target) });
  }

  readonly emit = (a: Alert): void => {
    const line = alertToJson(a);
    this.jsonl?.writeLine(line);
    this.pretty?.write(a);
    this.file?.writeLine(line);
    for (const s of this.syslog) s.sink.send(a);
    if (a.state === 'open') {
      this.total++;
      this.counts.set(a.kind, (this.counts.get(a.kind) ?? 0) + 1);
    }
  };

  /** Per closed window: alerts of closed windows reach the disk. */
  sync(): void {
    this.file?.sync();
    // a write error surfaces again at close(), which awaits the same flush
    if (this.live) this.jsonl?.flush().catch(() => {});
  }

  /** Per syslog target: messages sent, dropped (queue full, errors, unsent at close), reconnects. */
  syslogStats(): SyslogTargetStats[] {
    return this.syslog.map((s) => ({ target: s.target, ...s.sink.stats }));
  }

  async close(): Promise<void> {
    this.file?.close();
    await Promise.all(this.syslog.map((s) => s.sink.close()));
    await this.jsonl?.flush();
  }
}
