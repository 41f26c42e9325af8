import { readFile } from 'node:fs/promises';
import { ALERT_SCHEMA, type Alert } from '../alert/alert.js';
import { ALERT_KINDS } from '../detect/finding.js';
import type { InputProblem } from '../util/problem.js';
import { parseRfc3339 } from '../util/time.js';
import type { EpisodeSpan } from './data.js';

const KINDS: ReadonlySet<string> = new Set(ALERT_KINDS);
const NUMBERS = ['observed', 'expected', 'low', 'high', 'score'] as const;
const STRINGS = ['id', 'severity', 'host', 'role', 'start', 'end', 'state', 'feature', 'rule', 'sensor'] as const;

/**
 * Reads an alert feed (JSON lines, docs/alert-schema.md) and keeps the latest line of every episode
 * id (a feed carries open, update and closed lines per episode). Lines that are not alerts become
 * problems; the rest still count.
 */
export async function readAlertsFile(path: string): Promise<{ episodes: EpisodeSpan[]; problems: InputProblem[] }> {
  return parseAlerts(await readFile(path, 'utf8'), path);
}

export function parseAlerts(text: string, file: string): { episodes: EpisodeSpan[]; problems: InputProblem[] } {
  const latest = new Map<string, Alert>();
  const problems: InputProblem[] = [];
  let offset = 0;
  text.split('\n').forEach((raw, i) => {
    const at = offset;
    offset += Buffer.byteLength(raw) + 1;
    if (raw.trim() === '') return;
    const bad = checkAlert(raw);
    if (typeof bad === 'string') {
      problems.push({ file, offset: at, line: i + 1, reason: 'bad-alert-line', message: bad, fatal: false });
      return;
    }
    latest.set(bad.id, bad);
  });
  return { episodes: latestEpisodes(latest.values()), problems };
}

/** Episode spans of alerts, one per id (the last given wins), ordered by start then host. */
export function latestEpisodes(alerts: Iterable<Alert>): EpisodeSpan[] {
  const byId = new Map<string, Alert>();
  for (const a of alerts) byId.set(a.id, a);
  return [...byId.values()]
    .map((alert) => ({ alert, startMs: parseRfc3339(alert.start), endMs: parseRfc3339(alert.end) }))
    .sort((a, b) => a.startMs - b.startMs || (a.alert.host < b.alert.host ? -1 : a.alert.host > b.alert.host ? 1 : 0));
}

/** The alert on the line, or why it is not one. */
function checkAlert(line: string): Alert | string {
  let o: unknown;
  try {
    o = JSON.parse(line);
  } catch {
    return 'not JSON';
  }
  if (typeof o !== 'object' || o === null || Array.isArray(o)) return 'not a JSON object';
  const a = o as Record<string, unknown>;
  if (a.schema !== ALERT_SCHEMA) return `schema is not ${ALERT_SCHEMA}`;
  for (const k of STRINGS) if (typeof a[k] !== 'string') return `${k} is not a string`;
  for (const k of NUMBERS) if (typeof a[k] !== 'number') return `${k} is not a number`;
  if (typeof a.kind !== 'string' || !KINDS.has(a.kind)) return `unknown kind ${String(a.kind)}`;
  if (!Number.isFinite(parseRfc3339(a.start as string)) || !Number.isFinite(parseRfc3339(a.end as string))) {
    return 'start or end is not an RFC 3339 date-time';
  }
  const e = a.evidence as Record<string, unknown> | undefined;
  if (typeof e !== 'object' || e === null || !Array.isArray(e.top_peers) || !Array.isArray(e.top_ports)) {
    return 'evidence lacks top_peers or top_ports';
  }
  return a as unknown as Alert;
}
