import type { Alert } from '../alert/alert.js';
import { raiseSeverity } from '../alert/severity.js';
import { parseRfc3339 } from '../util/time.js';
import type { Label } from './store.js';

/** What labels decided for one episode: the benign label hiding it, or the malicious one raising it. */
export interface LabelDecision {
  suppressedBy?: number;
  raisedBy?: number;
}

export interface Filtered {
  alert: Alert;
  /** Id of the benign label that suppresses this line, or null. */
  suppressedBy: number | null;
}

/** The episode's main peer: the detector's `peer` evidence when it has one, else its top peer. */
export function mainPeer(a: Pick<Alert, 'evidence'>): string {
  const p = a.evidence.peer;
  if (typeof p === 'string' && p !== '') return p;
  return a.evidence.top_peers[0]?.peer ?? '';
}

/** Whether a label's scope covers an alert (the time rule is applied by the caller). */
export function labelMatches(l: Label, a: Alert): boolean {
  if (a.host !== l.host) return false;
  switch (l.scope) {
    case 'episode': return a.kind === l.kind && a.role === l.role;
    case 'host-kind': return a.kind === l.kind;
    case 'host-peer': return l.peer !== '' && mainPeer(a) === l.peer;
    case 'host': return true;
  }
}

/**
 * Analyst feedback in the sensor path, between the episode tracker and the outputs. An episode that
 * starts after a labelled one and falls in its scope takes the most recent matching label: benign
 * suppresses it (stored with `suppressed_by`, left out of the feed unless asked for; shown lines carry
 * the label id as the evidence extra `suppressed_by`), malicious raises its severity one step (evidence
 * extra `raised_by`). The decision is made at the episode's first line and holds for all its lines.
 */
export class LabelFilter {
  private readonly decisions: Map<string, LabelDecision>;

  constructor(private readonly labels: readonly Label[], decisions: Iterable<[string, LabelDecision]> = []) {
    this.decisions = new Map(decisions);
  }

  apply(a: Alert): Filtered {
    let d = this.decisions.get(a.id);
    if (!d) {
      d = this.decide(a);
      this.decisions.set(a.id, d);
    }
    if (a.state === 'closed') this.decisions.delete(a.id);
    if (d.suppressedBy !== undefined) {
      return { alert: { ...a, evidence: { ...a.evidence, suppressed_by: d.suppressedBy } }, suppressedBy: d.suppressedBy };
    }
    if (d.raisedBy !== undefined) {
      return { alert: { ...a, severity: raiseSeverity(a.severity), evidence: { ...a.evidence, raised_by: d.raisedBy } }, suppressedBy: null };
    }
    return { alert: a, suppressedBy: null };
  }

  /** Decisions of episodes still open, to keep in the state between runs. */
  openDecisions(): [string, LabelDecision][] {
    return [...this.decisions];
  }

  private decide(a: Alert): LabelDecision {
    const start = parseRfc3339(a.start);
    let chosen: Label | null = null;
    for (const l of this.labels) {
      if (l.alertId === a.id || !(start > l.episodeStart) || !labelMatches(l, a)) continue;
      if (!chosen || l.id > chosen.id) chosen = l;
    }
    if (!chosen) return {};
    return chosen.verdict === 'benign' ? { suppressedBy: chosen.id } : { raisedBy: chosen.id };
  }
}
