import { Chalk, type ChalkInstance } from 'chalk';
import type { Alert, Severity } from '../alert/alert.js';
import { explain } from '../alert/explain.js';

export interface ConsoleOptions {
  /** Colour wanted (the CLI maps --no-color to false). NO_COLOR in the environment always wins. */
  color?: boolean;
  env?: NodeJS.ProcessEnv;
}

const COLOURED = new Chalk({ level: 1 });
const PLAIN = new Chalk({ level: 0 });

/** Our palette; the severity word is always printed, so the line reads the same without colour. */
const SEVERITY_STYLE: Record<Severity, (c: ChalkInstance) => ChalkInstance> = {
  low: (c) => c.cyan,
  medium: (c) => c.yellow,
  high: (c) => c.red.bold,
  critical: (c) => c.bgRed.white.bold,
};

/** Whether to colour: the option (default on), switched off by a non-empty NO_COLOR (no-color.org). */
export function wantsColor(opts: ConsoleOptions = {}): boolean {
  const env = opts.env ?? process.env;
  return (opts.color ?? true) && !(env.NO_COLOR !== undefined && env.NO_COLOR !== '');
}

/** One terminal line (without newline): time, severity, kind, host, state, explanation. */
export function formatConsoleLine(a: Alert, color: boolean): string {
  const c = color ? COLOURED : PLAIN;
  const sev = SEVERITY_STYLE[a.severity](c)(a.severity.toUpperCase().padEnd(8));
  const time = c.dim(escapeControls(a.end));
  return `${time} ${sev} ${c.bold(escapeControls(a.kind))} ${escapeControls(a.host)} ${escapeControls(a.state)}: ${escapeControls(explain(a))}`;
}

/**
 * Makes data safe for a terminal: C0 controls (< 0x20), DEL and C1 controls (0x80-0x9f) become \xNN,
 * and the Unicode line and paragraph separators \u2028/\u2029, so no field can move the cursor,
 * change colours or start a new line.
 */
export function escapeControls(s: string): string {
  return s.replace(/[\u0000-\u001f\u007f-\u009f\u2028\u2029]/g, (ch) => {
    const code = ch.charCodeAt(0);
    return code <= 0xff ? `\\x${code.toString(16).padStart(2, '0')}` : `\\u${code.toString(16)}`;
  });
}

/** Writes one coloured line per alert to a terminal stream. */
export class ConsoleSink {
  private readonly color: boolean;
  constructor(private readonly out: NodeJS.WritableStream, opts: ConsoleOptions = {}) {
    this.color = wantsColor(opts);
  }

  write(a: Alert): void {
    this.out.write(`${formatConsoleLine(a, this.color)}\n`);
  }
}
