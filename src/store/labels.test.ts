import { describe, expect, it } from 'vitest';
import type { Alert } from '../alert/alert.js';
import { LabelFilter, labelMatches, mainPeer } from './labels.js';
import type { Label } from './store.js';

// Label scopes and decisions (ours: docs/operations.md, State; the severity step is
// src/alert/severity.ts raiseSeverity). No outside source.
function alert(over: Partial<Alert> = {}): Alert {
  return {
    schema: 'tidewatch.alert/1', id: 'tw1-2', kind: 'vertical-scan', severity: 'medium', host: '192.168.60.23', role: 'source',
    start: '2026-03-10T10:16:00.000Z', end: '2026-03-10T10:17:00.000Z', state: 'open', feature: 'f', observed: 1, expected: 0, low: 0, high: 0, score: 9,
    evidence: { top_peers: [{ peer: '10.60.0.9', count: 3 }], top_ports: [], sample_flows: [], flows: 1, packets: 1, bytes: 1, peer: '10.60.0.5' },
    rule: 'r', sensor: 't', ...over,
  };
}
function label(over: Partial<Label> = {}): Label {
  return {
    id: 1, alertId: 'tw1-1', verdict: 'benign', scope: 'episode', kind: 'vertical-scan', host: '192.168.60.23', role: 'source',
    peer: '10.60.0.5', episodeStart: Date.parse('2026-03-10T09:34:00Z'), note: '', created: 'x', ...over,
  };
}

describe('labelMatches', () => {
  it('episode: kind, host and role; host-kind: kind and host; host: the host; host-peer: host and main peer', () => {
    expect(labelMatches(label(), alert())).toBe(true);
    expect(labelMatches(label(), alert({ role: 'target' }))).toBe(false);
    expect(labelMatches(label({ scope: 'host-kind' }), alert({ role: 'target' }))).toBe(true);
    expect(labelMatches(label({ scope: 'host-kind' }), alert({ kind: 'horizontal-scan' }))).toBe(false);
    expect(labelMatches(label({ scope: 'host' }), alert({ kind: 'volume-surge', role: 'target' }))).toBe(true);
    expect(labelMatches(label({ scope: 'host' }), alert({ host: '10.60.0.5' }))).toBe(false);
    expect(labelMatches(label({ scope: 'host-peer' }), alert({ kind: 'unusual-destination' }))).toBe(true);
    const other = alert({ evidence: { ...alert().evidence, peer: '10.60.0.6' } });
    expect(labelMatches(label({ scope: 'host-peer' }), other)).toBe(false);
  });

  it('the main peer is the detector\'s peer evidence, else the top peer', () => {
    expect(mainPeer(alert())).toBe('10.60.0.5');
    const { peer: _drop, ...rest } = alert().evidence;
    expect(mainPeer({ evidence: rest })).toBe('10.60.0.9');
  });
});

describe('LabelFilter', () => {
  it('suppresses later matching episodes only, for all their lines, marking them', () => {
    const f = new LabelFilter([label()]);
    const open = f.apply(alert());
    expect(open.suppressedBy).toBe(1);
    expect(open.alert.evidence.suppressed_by).toBe(1);
    expect(f.openDecisions().map(([id]) => id)).toEqual(['tw1-2']);
    expect(f.apply(alert({ state: 'closed', evidence: { ...alert().evidence, peer: 'changed' } })).suppressedBy).toBe(1);
    expect(f.openDecisions()).toEqual([]); // forgotten once closed
    expect(f.apply(alert({ id: 'tw1-1', start: '2026-03-10T09:34:00.000Z' })).suppressedBy).toBeNull(); // the labelled one itself
    expect(f.apply(alert({ id: 'tw1-0', start: '2026-03-10T09:00:00.000Z' })).suppressedBy).toBeNull(); // earlier
  });

  it('malicious raises one step; the most recent matching label wins', () => {
    const f = new LabelFilter([label(), label({ id: 2, verdict: 'malicious', scope: 'host' })]);
    const r = f.apply(alert());
    expect(r.suppressedBy).toBeNull();
    expect([r.alert.severity, r.alert.evidence.raised_by]).toEqual(['high', 2]);
    const critical = new LabelFilter([label({ verdict: 'malicious' })]).apply(alert({ severity: 'critical' }));
    expect(critical.alert.severity).toBe('critical');
  });

  it('keeps a restored decision even when the labels changed since', () => {
    const f = new LabelFilter([], [['tw1-2', { suppressedBy: 7 }]]);
    expect(f.apply(alert({ state: 'update' })).suppressedBy).toBe(7);
  });
});
