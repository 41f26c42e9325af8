import { fmtBytes } from '../alert/explain.js';

/** What progress needs of an input: its name, total size (-1 when unknown) and bytes consumed so far. */
export interface ProgressSource {
  readonly name: string;
  readonly size: number;
  consumed(): number;
}

export interface ProgressOptions {
  quiet: boolean;
  /** Where the line goes (default stderr); a terminal gets a redrawn bar, anything else a counter line. */
  stream?: NodeJS.WriteStream;
  /** Redraw period on a terminal (default 250 ms: at most four updates a second). */
  barEveryMs?: number;
  /** Period of the plain counter line when not a terminal (default 5 s). */
  lineEveryMs?: number;
  /** Clock, for tests. */
  now?: () => number;
}

const BAR_WIDTH = 24;

/**
 * Reading progress of long inputs, driven by a timer that polls the source, so the record path is
 * never touched. On a terminal: one line redrawn in place with a bar, bytes, rate and ETA. Otherwise:
 * a plain line every few seconds, for logs. `quiet` shows nothing.
 */
export class Progress {
  private src: ProgressSource | null = null;
  private timer: NodeJS.Timeout | null = null;
  private startedMs = 0;
  private drawn = false;
  private readonly stream: NodeJS.WriteStream;
  private readonly tty: boolean;
  private readonly now: () => number;

  constructor(private readonly o: ProgressOptions) {
    this.stream = o.stream ?? process.stderr;
    this.tty = this.stream.isTTY === true;
    this.now = o.now ?? Date.now;
  }

  /** Starts following `src` (replacing any earlier input). */
  watch(src: ProgressSource): void {
    if (this.o.quiet) return;
    this.stop();
    this.src = src;
    this.startedMs = this.now();
    const every = this.tty ? (this.o.barEveryMs ?? 250) : (this.o.lineEveryMs ?? 5_000);
    this.timer = setInterval(() => this.tick(), every);
    this.timer.unref();
  }

  /** Wipes the bar so another line can be written; the next tick draws it again. */
  clear(): void {
    if (this.drawn) this.stream.write('\r\x1b[K');
    this.drawn = false;
  }

  /** Stops following the current input and wipes the bar. */
  stop(): void {
    if (this.timer) clearInterval(this.timer);
    this.timer = null;
    this.src = null;
    this.clear();
  }

  private tick(): void {
    const src = this.src;
    if (!src) return;
    const text = this.tty ? barLine(src, this.now() - this.startedMs, this.stream.columns || 80)
      : `tidewatch: ${plainLine(src, this.now() - this.startedMs)}\n`;
    this.stream.write(this.tty ? `\r\x1b[K${text}` : text);
    this.drawn = this.tty;
  }
}

interface Figures { done: number; size: number; share: number; rate: number; etaMs: number }

function figures(src: ProgressSource, elapsedMs: number): Figures {
  const done = src.consumed();
  const size = src.size;
  const rate = elapsedMs > 0 ? (done * 1000) / elapsedMs : 0;
  const share = size > 0 ? Math.min(1, done / size) : Number.NaN;
  const etaMs = size > 0 && rate > 0 ? ((size - done) / rate) * 1000 : Number.NaN;
  return { done, size, share, rate, etaMs };
}

/** `name [=====>     ]  45%  120 MB / 260 MB  85 MB/s  ETA 0:02`, cut to the terminal's width. */
export function barLine(src: ProgressSource, elapsedMs: number, columns: number): string {
  const f = figures(src, elapsedMs);
  const rate = `${fmtBytes(f.rate)}/s`;
  if (Number.isNaN(f.share)) return fit(`${src.name}  ${fmtBytes(f.done)}  ${rate}`, columns);
  const full = Math.round(f.share * BAR_WIDTH);
  const bar = `[${'='.repeat(Math.max(0, full - 1))}${full > 0 ? (full === BAR_WIDTH ? '=' : '>') : ''}${' '.repeat(BAR_WIDTH - full)}]`;
  const pct = `${Math.floor(f.share * 100)}%`.padStart(4);
  return fit(`${src.name} ${bar} ${pct}  ${fmtBytes(f.done)} / ${fmtBytes(f.size)}  ${rate}  ETA ${clock(f.etaMs)}`, columns);
}

/** `name: 120 MB of 260 MB read (45%), 85 MB/s, 0:02 left` */
export function plainLine(src: ProgressSource, elapsedMs: number): string {
  const f = figures(src, elapsedMs);
  const rate = `${fmtBytes(f.rate)}/s`;
  if (Number.isNaN(f.share)) return `${src.name}: ${fmtBytes(f.done)} read, ${rate}`;
  const left = Number.isFinite(f.etaMs) ? `, ${clock(f.etaMs)} left` : '';
  return `${src.name}: ${fmtBytes(f.done)} of ${fmtBytes(f.size)} read (${Math.floor(f.share * 100)}%), ${rate}${left}`;
}

/** m:ss, or h:mm:ss past an hour; `?` when unknown. */
export function clock(ms: number): string {
  if (!Number.isFinite(ms) || ms < 0) return '?';
  const s = Math.round(ms / 1000);
  const mm = String(Math.floor(s / 60) % 60), ss = String(s % 60).padStart(2, '0');
  return s >= 3600 ? `${Math.floor(s / 3600)}:${mm.padStart(2, '0')}:${ss}` : `${mm}:${ss}`;
}

/** Keeps the end (the figures) when the name makes the line too long: a wrapped line cannot be redrawn. */
function fit(line: string, columns: number): string {
  const max = Math.max(20, columns - 1);
  return line.length <= max ? line : `…${line.slice(line.length - max + 1)}`;
}
