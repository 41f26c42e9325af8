/**
 * An input problem: errors as values at the ingest boundary. Every reader reports bad input this way,
 * counts it, and goes on where it can; nothing is thrown past a reader.
 */
export interface InputProblem {
  /** The input's name as the user gave it (`-` for stdin). */
  file: string;
  /** Byte offset in the input where the problem starts (or -1 when not byte-addressed). */
  offset: number;
  /** Line number (1-based) for line-oriented inputs, when known. */
  line?: number;
  /** Short machine-friendly reason, e.g. `record-too-long`, `truncated`. */
  reason: string;
  /** One human sentence. */
  message: string;
  /** true when the reader stopped reading this input because of it. */
  fatal: boolean;
}

/** One-line rendering used on stderr: `FILE: byte OFFSET: message`. */
export function formatProblem(p: InputProblem): string {
  const where = p.line !== undefined ? `line ${p.line}` : p.offset >= 0 ? `byte ${p.offset}` : 'input';
  return `${p.file}: ${where}: ${p.message}`;
}

/** Counts by reason; cheap to update, printed in summaries. */
export class ProblemCounter {
  readonly counts = new Map<string, number>();
  add(reason: string, n = 1): void {
    this.counts.set(reason, (this.counts.get(reason) ?? 0) + n);
  }
  get total(): number {
    let t = 0;
    for (const v of this.counts.values()) t += v;
    return t;
  }
  toObject(): Record<string, number> {
    return Object.fromEntries([...this.counts.entries()].sort((a, b) => a[0].localeCompare(b[0])));
  }
}
