import { parseRfc3339 } from '../util/time.js';
import type { InputProblem } from '../util/problem.js';
import type { Family, Truth } from './truth.js';

/** Alert kinds per episode family (docs/scenario.md, "Scoring"). */
export const FAMILY_OF_KIND: Readonly<Record<string, Family>> = {
  'volume-surge': 'flood',
  'fan-in-flood': 'flood',
  'vertical-scan': 'scan',
  'horizontal-scan': 'scan',
  'unusual-destination': 'unusual-destination',
};

/** An episode's alert matches while it overlaps the episode extended by this much after its end. */
export const MATCH_GRACE_MS = 5 * 60_000;

/** One alert id with the union of the spans of its open/update/closed lines. */
export interface AlertSpan {
  id: string;
  kind: string;
  host: string;
  start: number;
  end: number;
}

export interface EpisodeScore {
  id: string;
  family: Family;
  kind: string;
  detected: boolean;
  /** First matching alert's start minus the episode's start, seconds (negative: the alert began first). */
  delay_s: number | null;
  /** Ids of the alerts that matched. */
  alerts: string[];
}

export type AlertVerdict = 'detection' | 'explained' | 'false-benign-period' | 'false-other';

export interface EvalResult {
  episodes: EpisodeScore[];
  /** Distinct alert ids. */
  alerts: number;
  true_alerts: number;
  /** Alerts of another family (or traffic-shift) overlapping an episode on one of its hosts: neither false nor detections. */
  explained: number;
  false_benign_period: number;
  false_other: number;
  false_alerts: number;
  detected: number;
  missed: number;
  /** true / (true + false); null when no alert counts either way. */
  precision: number | null;
  /** detected / episodes; null when the truth has no episodes. */
  recall: number | null;
  benign_host_hours: number;
  /** False alerts per 100 host-hours of benign traffic; null when the truth has none. */
  false_per_100_host_hours: number | null;
  verdicts: Record<string, AlertVerdict>;
}

/**
 * Reads alert feed lines (DESIGN.md section 4), merging lines that share an id. Lines that are not
 * alerts become problems; reading goes on.
 */
export function parseAlertLines(text: string, file: string): { alerts: AlertSpan[]; problems: InputProblem[] } {
  const byId = new Map<string, AlertSpan>();
  const problems: InputProblem[] = [];
  const lines = text.split('\n');
  let offset = 0;
  lines.forEach((raw, i) => {
    const lineOffset = offset;
    offset += Buffer.byteLength(raw) + 1;
    const line = raw.trim();
    if (line === '') return;
    const bad = (message: string) => problems.push({ file, offset: lineOffset, line: i + 1, reason: 'bad-alert-line', message, fatal: false });
    let o: unknown;
    try {
      o = JSON.parse(line);
    } catch {
      bad('not JSON');
      return;
    }
    const a = o as Record<string, unknown>;
    if (typeof a !== 'object' || a === null || typeof a.id !== 'string' || typeof a.kind !== 'string' || typeof a.host !== 'string'
      || typeof a.start !== 'string' || typeof a.end !== 'string') {
      bad('not an alert (needs string id, kind, host, start, end)');
      return;
    }
    const start = parseRfc3339(a.start), end = parseRfc3339(a.end);
    if (!Number.isFinite(start) || !Number.isFinite(end)) {
      bad('start or end is not an RFC 3339 date-time');
      return;
    }
    const seen = byId.get(a.id);
    if (seen) {
      seen.start = Math.min(seen.start, start);
      seen.end = Math.max(seen.end, end);
    } else {
      byId.set(a.id, { id: a.id, kind: a.kind, host: a.host, start: Math.min(start, end), end: Math.max(start, end) });
    }
  });
  return { alerts: [...byId.values()], problems };
}

interface EpisodeSpan { hosts: Set<string>; start: number; end: number; family: Family }

/** Scores alerts against a truth file with the matching rule of docs/scenario.md. */
export function scoreAlerts(truth: Truth, alerts: readonly AlertSpan[]): EvalResult {
  const eps: EpisodeSpan[] = truth.episodes.map((e) => ({
    hosts: new Set([...e.attackers, ...e.victims]), start: parseRfc3339(e.start), end: parseRfc3339(e.end) + MATCH_GRACE_MS, family: e.family,
  }));
  const benign = truth.benign.map((b) => ({ hosts: new Set(b.hosts), start: parseRfc3339(b.start), end: parseRfc3339(b.end) }));
  const overlaps = (a: AlertSpan, s: { start: number; end: number }) => a.start <= s.end && a.end >= s.start;
  const scores: EpisodeScore[] = truth.episodes.map((e) => ({ id: e.id, family: e.family, kind: e.kind, detected: false, delay_s: null, alerts: [] }));
  const verdicts: Record<string, AlertVerdict> = {};
  let trueAlerts = 0, explained = 0, falseBenign = 0, falseOther = 0;

  for (const a of [...alerts].sort((x, y) => x.start - y.start || x.id.localeCompare(y.id))) {
    const family = FAMILY_OF_KIND[a.kind];
    let matched = false;
    eps.forEach((e, i) => {
      if (!e.hosts.has(a.host) || !overlaps(a, e)) return;
      if (family === e.family) {
        matched = true;
        const s = scores[i]!;
        s.alerts.push(a.id);
        const delay = (a.start - e.start) / 1000;
        if (!s.detected || delay < s.delay_s!) s.delay_s = delay;
        s.detected = true;
      }
    });
    let verdict: AlertVerdict;
    if (matched) verdict = 'detection';
    // another detector's view of the same incident (a scanner's flow surge, an upload's volume): true,
    // but not a detection of that episode's family
    else if (eps.some((e) => e.hosts.has(a.host) && overlaps(a, e))) verdict = 'explained';
    else if (benign.some((b) => b.hosts.has(a.host) && overlaps(a, b))) verdict = 'false-benign-period';
    else verdict = 'false-other';
    verdicts[a.id] = verdict;
    if (verdict === 'detection') trueAlerts++;
    else if (verdict === 'explained') explained++;
    else if (verdict === 'false-benign-period') falseBenign++;
    else falseOther++;
  }

  const falseAlerts = falseBenign + falseOther;
  const detected = scores.filter((s) => s.detected).length;
  return {
    episodes: scores,
    alerts: alerts.length,
    true_alerts: trueAlerts,
    explained,
    false_benign_period: falseBenign,
    false_other: falseOther,
    false_alerts: falseAlerts,
    detected,
    missed: scores.length - detected,
    precision: trueAlerts + falseAlerts > 0 ? trueAlerts / (trueAlerts + falseAlerts) : null,
    recall: scores.length > 0 ? detected / scores.length : null,
    benign_host_hours: truth.benign_host_hours,
    false_per_100_host_hours: truth.benign_host_hours > 0 ? (100 * falseAlerts) / truth.benign_host_hours : null,
    verdicts,
  };
}

/** Checks the parts of a truth file the scorer reads; returns a one-line complaint or null. */
export function checkTruth(t: unknown): string | null {
  const o = t as Truth;
  if (typeof o !== 'object' || o === null) return 'truth is not a JSON object';
  if (!Array.isArray(o.episodes) || !Array.isArray(o.benign)) return 'truth needs `episodes` and `benign` arrays';
  if (typeof o.benign_host_hours !== 'number') return 'truth needs a numeric `benign_host_hours`';
  for (const e of o.episodes) {
    if (typeof e?.id !== 'string' || !['flood', 'scan', 'unusual-destination'].includes(e.family)
      || !Array.isArray(e.attackers) || !Array.isArray(e.victims)
      || !Number.isFinite(parseRfc3339(e.start)) || !Number.isFinite(parseRfc3339(e.end))) return `truth episode ${JSON.stringify(e?.id)} is malformed`;
  }
  for (const b of o.benign) {
    if (!Array.isArray(b?.hosts) || !Number.isFinite(parseRfc3339(b.start)) || !Number.isFinite(parseRfc3339(b.end))) return 'truth benign entry is malformed';
  }
  return null;
}
