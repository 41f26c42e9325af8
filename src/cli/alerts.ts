import { existsSync } from 'node:fs';
import { Option, type Command } from 'commander';
import type { Alert, Severity } from '../alert/alert.js';
import { SEVERITIES } from '../alert/severity.js';
import { formatConsoleLine, wantsColor } from '../sink/console.js';
import { StateError, StateStore, type StoredAlert } from '../store/store.js';
import { parseRfc3339 } from '../util/time.js';
import { usageError } from './exit.js';

interface AlertsRaw {
  state: string; since?: string; until?: string; kind?: string; host?: string; severity?: Severity;
  format: 'jsonl' | 'pretty' | 'csv'; showSuppressed?: boolean; color?: boolean;
}

const CSV_COLUMNS = ['id', 'kind', 'severity', 'host', 'role', 'start', 'end', 'state', 'feature', 'observed', 'expected', 'score', 'rule', 'sensor', 'suppressed_by'] as const;

/** `tidewatch alerts --state DB`: the stored feed, filtered, as JSON lines, terminal lines or CSV. */
export function register(program: Command): void {
  program
    .command('alerts')
    .description('list the alert lines stored in a state file')
    .requiredOption('--state <file>', 'state file')
    .option('--since <time>', 'alerts whose span ends at or after this RFC 3339 time')
    .option('--until <time>', 'alerts whose span starts before this RFC 3339 time')
    .option('--kind <kind>', 'only this alert kind')
    .option('--host <address>', 'only alerts about this host')
    .addOption(new Option('--severity <level>', 'this severity or higher').choices([...SEVERITIES]))
    .addOption(new Option('--format <fmt>', 'output format').choices(['jsonl', 'pretty', 'csv']).default('jsonl'))
    .option('--show-suppressed', 'include lines suppressed by a benign label (their evidence carries suppressed_by)')
    .option('--no-color', 'no colour in pretty output')
    .action((raw: AlertsRaw) => {
      const sinceMs = time('--since', raw.since);
      const untilMs = time('--until', raw.until);
      const store = openExisting(raw.state);
      try {
        const rows = store.alerts({ sinceMs, untilMs, kind: raw.kind, host: raw.host, minSeverity: raw.severity, showSuppressed: raw.showSuppressed });
        const color = wantsColor({ color: raw.color });
        const out: string[] = raw.format === 'csv' ? [CSV_COLUMNS.join(',')] : [];
        for (const r of rows) out.push(render(r, raw.format, color));
        if (out.length > 0) process.stdout.write(`${out.join('\n')}\n`);
      } finally {
        store.close();
      }
    });
}

function render(r: StoredAlert, format: AlertsRaw['format'], color: boolean): string {
  if (format === 'jsonl') return r.json;
  const a = JSON.parse(r.json) as Alert;
  if (format === 'pretty') return formatConsoleLine(a, color && process.stdout.isTTY === true) + (r.suppressed_by !== null ? ` [suppressed by label ${r.suppressed_by}]` : '');
  const cells: Record<(typeof CSV_COLUMNS)[number], unknown> = { ...a, suppressed_by: r.suppressed_by ?? '' };
  return CSV_COLUMNS.map((c) => csvCell(cells[c])).join(',');
}

/** RFC 4180: a field with a comma, quote or line break is quoted, quotes doubled. */
function csvCell(v: unknown): string {
  const s = String(v);
  return /[",\r\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

function time(name: string, v: string | undefined): number | undefined {
  if (v === undefined) return undefined;
  const t = parseRfc3339(v);
  if (Number.isNaN(t)) throw usageError(`${name}: expected an RFC 3339 time such as 2026-03-10T09:00:00Z, got ${v}`);
  return t;
}

/** A state file that must exist already (reading commands never create one). */
export function openExisting(path: string): StateStore {
  if (!existsSync(path)) throw usageError(`--state: no such state file: ${path}`);
  try {
    return StateStore.open(path);
  } catch (e) {
    if (e instanceof StateError) throw usageError(`--state: ${e.message}`);
    throw e;
  }
}
