import type { AlertKind, Finding, Role } from '../detect/finding.js';
import { rfc3339 } from '../util/time.js';
import { ALERT_SCHEMA, type Alert, type AlertState } from './alert.js';
import { EvidenceAccumulator, type EvidenceState } from './evidence.js';
import { episodeId } from './id.js';
import { severityForScore } from './severity.js';

export interface EpisodeOptions {
  /** Window length in ms (the detectors' window). */
  windowMs: number;
  /** At most one `update` per episode per this much event time. Default 600 000 (10 min). */
  updateEveryMs?: number;
  /** An episode closes after this many consecutive windows without a finding. Default 3. */
  closeAfterQuietWindows?: number;
  sensor: string;
  /** Budget on episodes per UTC clock hour of their start; absent = no budget. */
  maxAlertsPerHour?: number;
  /** `replay` holds an hour's opens until the hour is over; `live` decides greedily at each open. */
  mode: 'replay' | 'live';
}

export interface EpisodeCounters {
  opened: number;
  suppressedByBudget: number;
  emitted: Record<AlertState, number>;
}

const HOUR_MS = 3_600_000;

type Admission = 'pending' | 'admitted' | 'suppressed';

interface HeldAlert { alert: Alert; atMs: number; seq: number }

interface Episode {
  key: string;
  kind: AlertKind;
  host: string;
  role: Role;
  id: string;
  startMs: number;
  /** End of the last window that had a finding. */
  endMs: number;
  openingScore: number;
  /** The finding with the highest score so far: its values stand for the episode. */
  peak: Finding;
  evidence: EvidenceAccumulator;
  /** Event time of the last line sent (open or update). */
  lastSentMs: number;
  admission: Admission;
  /** Lines waiting for the hour's budget verdict (replay mode only). */
  held: HeldAlert[];
}

/** An episode as plain data (evidence as its tallies), for the state store. */
export type EpisodeState = Omit<Episode, 'evidence'> & { evidence: EvidenceState };

/** Everything the tracker holds between windows: open episodes, held hours and counters. */
export interface TrackerState {
  /** Every episode still referenced (open, or closed but waiting in a held hour), each once. */
  episodes: EpisodeState[];
  /** Indexes into `episodes` of the open ones, in the tracker's order. */
  active: number[];
  /** Start hour -> indexes into `episodes`. */
  pendingHours: [number, number[]][];
  liveAdmitted: [number, number[]][];
  heldSeq: number;
  lastWindowEnd: number;
  counters: EpisodeCounters;
}

/**
 * Groups findings into episodes keyed by (kind, host, role) and emits the alert feed: one `open`, then
 * `update`s at most every `updateEveryMs` of event time while findings continue, then `closed` after
 * `closeAfterQuietWindows` windows without one. Values (feature, observed, expected, low, high, score,
 * rule, evidence extras) are those of the highest-scoring window so far; evidence counts are merged
 * over all windows (see EvidenceAccumulator); severity follows the peak score.
 *
 * Closing depends only on whether findings are present, never on their scores. So when a detector run
 * with a smaller alpha yields a subset of the findings, and the detector keeps reporting an ongoing
 * episode at an alpha-independent continuation level for as long as the episode is open here (that is,
 * at least closeAfterQuietWindows windows after its last finding), the smaller run never yields more
 * episode ids. Arbitrary subsets carry no such promise: dropping findings in the middle of an episode
 * can split it in two.
 */
export class EpisodeTracker {
  private readonly windowMs: number;
  private readonly updateEveryMs: number;
  private readonly quietMs: number;
  private readonly sensor: string;
  private readonly budget: number | undefined;
  private readonly mode: 'replay' | 'live';
  private readonly active = new Map<string, Episode>();
  /** Replay: episodes per start hour awaiting the verdict. */
  private readonly pendingHours = new Map<number, Episode[]>();
  /** Live: per start hour, the opening scores admitted so far (ascending, at most `budget`). */
  private readonly liveAdmitted = new Map<number, number[]>();
  private heldSeq = 0;
  private lastWindowEnd = -Infinity;
  readonly counters: EpisodeCounters = { opened: 0, suppressedByBudget: 0, emitted: { open: 0, update: 0, closed: 0 } };
  /** Peer and port tally entries pruned from episodes' evidence this run (the evidence cap; not stored). */
  evidencePruned = 0;

  constructor(opts: EpisodeOptions, private readonly emit: (a: Alert) => void) {
    if (!(opts.windowMs > 0)) throw new RangeError('windowMs must be positive');
    this.windowMs = opts.windowMs;
    this.updateEveryMs = opts.updateEveryMs ?? 600_000;
    this.quietMs = (opts.closeAfterQuietWindows ?? 3) * opts.windowMs;
    this.sensor = opts.sensor;
    this.budget = opts.maxAlertsPerHour;
    this.mode = opts.mode;
  }

  /** Once per closed window, with every host's findings for it (an empty array still advances time). */
  observe(findings: Finding[], windowStart: number, windowEnd: number): void {
    const byKey = strongestPerKey(findings);

    // Quiet episodes close first; a finding after a long enough gap starts a new episode.
    for (const ep of [...this.active.values()].sort(byEpisodeKey)) {
      const quietUntil = byKey.has(ep.key) ? windowStart : windowEnd;
      if (quietUntil - ep.endMs >= this.quietMs) this.close(ep, Math.min(quietUntil, ep.endMs + this.quietMs));
    }

    for (const key of [...byKey.keys()].sort()) {
      const f = byKey.get(key)!;
      const ep = this.active.get(key);
      if (ep) this.continueEpisode(ep, f, windowEnd);
      else this.openEpisode(key, f, windowStart, windowEnd);
    }

    this.lastWindowEnd = Math.max(this.lastWindowEnd, windowEnd);
    if (this.mode === 'replay') this.releaseHoursBefore(windowEnd);
    else this.forgetLiveHoursBefore(windowEnd);
  }

  /** End of input: closes every open episode and settles every held hour. */
  finish(): void {
    for (const ep of [...this.active.values()].sort(byEpisodeKey)) this.close(ep, this.lastWindowEnd);
    this.releaseHoursBefore(Infinity);
  }

  /** Open episodes (with their evidence), held hours and counters, so a later run continues them. */
  snapshot(): TrackerState {
    const index = new Map<Episode, number>();
    const episodes: EpisodeState[] = [];
    const ref = (ep: Episode): number => {
      let i = index.get(ep);
      if (i === undefined) {
        i = episodes.push({ ...ep, evidence: ep.evidence.toState(), held: ep.held.map((h) => ({ ...h })) }) - 1;
        index.set(ep, i);
      }
      return i;
    };
    return {
      active: [...this.active.values()].map(ref),
      pendingHours: [...this.pendingHours].map(([h, eps]) => [h, eps.map(ref)]),
      episodes,
      liveAdmitted: [...this.liveAdmitted].map(([h, xs]) => [h, xs.slice()]),
      heldSeq: this.heldSeq, lastWindowEnd: this.lastWindowEnd,
      counters: { ...this.counters, emitted: { ...this.counters.emitted } },
    };
  }

  /** Continues from a snapshot (replaces whatever the tracker held). */
  restore(s: TrackerState): void {
    const eps: Episode[] = s.episodes.map((e) => ({ ...e, evidence: EvidenceAccumulator.fromState(e.evidence), held: e.held.map((h) => ({ ...h })) }));
    this.active.clear();
    for (const i of s.active) this.active.set(eps[i]!.key, eps[i]!);
    this.pendingHours.clear();
    for (const [h, list] of s.pendingHours) this.pendingHours.set(h, list.map((i) => eps[i]!));
    this.liveAdmitted.clear();
    for (const [h, xs] of s.liveAdmitted) this.liveAdmitted.set(h, xs.slice());
    this.heldSeq = s.heldSeq;
    this.lastWindowEnd = s.lastWindowEnd;
    this.counters.opened = s.counters.opened;
    this.counters.suppressedByBudget = s.counters.suppressedByBudget;
    Object.assign(this.counters.emitted, s.counters.emitted);
  }

  private openEpisode(key: string, f: Finding, windowStart: number, windowEnd: number): void {
    const evidence = new EvidenceAccumulator();
    this.evidencePruned += evidence.add(f.evidence);
    const ep: Episode = {
      key, kind: f.kind, host: f.host, role: f.role,
      id: episodeId(f.kind, f.host, f.role, windowStart),
      startMs: windowStart, endMs: windowEnd, openingScore: f.score, peak: f, evidence,
      lastSentMs: windowEnd, admission: 'admitted', held: [],
    };
    this.active.set(key, ep);
    this.counters.opened++;
    this.admit(ep);
    this.send(ep, 'open', windowEnd);
  }

  private continueEpisode(ep: Episode, f: Finding, windowEnd: number): void {
    ep.endMs = windowEnd;
    this.evidencePruned += ep.evidence.add(f.evidence);
    if (f.score > ep.peak.score) ep.peak = f;
    if (windowEnd - ep.lastSentMs >= this.updateEveryMs) {
      ep.lastSentMs = windowEnd;
      this.send(ep, 'update', windowEnd);
    }
  }

  private close(ep: Episode, atMs: number): void {
    this.active.delete(ep.key);
    this.send(ep, 'closed', atMs);
  }

  /** Sets the episode's admission under the budget. */
  private admit(ep: Episode): void {
    if (this.budget === undefined) return;
    const hour = Math.floor(ep.startMs / HOUR_MS);
    if (this.mode === 'replay') {
      ep.admission = 'pending';
      const list = this.pendingHours.get(hour);
      if (list) list.push(ep);
      else this.pendingHours.set(hour, [ep]);
      return;
    }
    // Live, greedy: admit until the budget is used, then only scores above the lowest admitted
    // (which the newcomer replaces as a rival). Lines already sent cannot be recalled, so an hour
    // may end up with more than `budget` episodes when later ones outscore earlier ones.
    let admitted = this.liveAdmitted.get(hour);
    if (!admitted) this.liveAdmitted.set(hour, (admitted = []));
    if (admitted.length < this.budget) {
      insertSorted(admitted, ep.openingScore);
    } else if (admitted.length > 0 && ep.openingScore > admitted[0]!) {
      admitted.shift();
      insertSorted(admitted, ep.openingScore);
    } else {
      ep.admission = 'suppressed';
      this.counters.suppressedByBudget++;
    }
  }

  private send(ep: Episode, state: AlertState, atMs: number): void {
    if (ep.admission === 'suppressed') return;
    const alert = this.toAlert(ep, state);
    if (ep.admission === 'pending') ep.held.push({ alert, atMs, seq: this.heldSeq++ });
    else this.deliver(alert);
  }

  private deliver(a: Alert): void {
    this.counters.emitted[a.state]++;
    this.emit(a);
  }

  /** Replay: settles every hour that ended at or before `t`: the top `budget` opens go out, in time order. */
  private releaseHoursBefore(t: number): void {
    for (const hour of [...this.pendingHours.keys()].sort((a, b) => a - b)) {
      if ((hour + 1) * HOUR_MS > t) continue;
      const eps = this.pendingHours.get(hour)!;
      this.pendingHours.delete(hour);
      eps.sort((a, b) => b.openingScore - a.openingScore || a.startMs - b.startMs || (a.id < b.id ? -1 : 1));
      const held: HeldAlert[] = [];
      eps.forEach((ep, rank) => {
        if (rank < this.budget!) {
          ep.admission = 'admitted';
          held.push(...ep.held);
        } else {
          ep.admission = 'suppressed';
          this.counters.suppressedByBudget++;
        }
        ep.held = [];
      });
      held.sort((a, b) => a.atMs - b.atMs || a.seq - b.seq);
      for (const h of held) this.deliver(h.alert);
    }
  }

  /** Live: no episode can start in an hour that is over, so its tally can go. */
  private forgetLiveHoursBefore(t: number): void {
    for (const hour of this.liveAdmitted.keys()) if ((hour + 1) * HOUR_MS <= t) this.liveAdmitted.delete(hour);
  }

  private toAlert(ep: Episode, state: AlertState): Alert {
    const p = ep.peak;
    const evidence = ep.evidence.snapshot(p.evidence);
    if (evidence.window_s === undefined) evidence.window_s = this.windowMs / 1000;
    return {
      schema: ALERT_SCHEMA,
      id: ep.id,
      kind: ep.kind,
      severity: severityForScore(p.score),
      host: ep.host,
      role: ep.role,
      start: rfc3339(ep.startMs),
      end: rfc3339(ep.endMs),
      state,
      feature: p.feature,
      observed: p.observed,
      expected: p.expected,
      low: p.low,
      high: p.high,
      score: p.score,
      evidence,
      rule: p.rule,
      sensor: this.sensor,
    };
  }
}

/**
 * One finding per (kind, host, role) for the window: the highest score. Two features of one kind in one
 * window describe the same flows, so their evidence is not added up.
 */
function strongestPerKey(findings: Finding[]): Map<string, Finding> {
  const m = new Map<string, Finding>();
  for (const f of findings) {
    const key = `${f.kind}|${f.host}|${f.role}`;
    const prev = m.get(key);
    if (!prev || f.score > prev.score) m.set(key, f);
  }
  return m;
}

function byEpisodeKey(a: Episode, b: Episode): number {
  return a.key < b.key ? -1 : a.key > b.key ? 1 : 0;
}

function insertSorted(xs: number[], v: number): void {
  let i = 0;
  while (i < xs.length && xs[i]! < v) i++;
  xs.splice(i, 0, v);
}
