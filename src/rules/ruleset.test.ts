import { describe, expect, it } from 'vitest';
import { DEFAULT_FLOORS } from '../detect/thresholds.js';
import type { Finding } from '../detect/finding.js';
import { RuleSet } from './ruleset.js';
import { rulesFrom } from './testing.js';

function finding(over: Partial<Finding> & { peer?: string; port?: number } = {}): Finding {
  const { peer, port, ...rest } = over;
  return {
    kind: 'volume-surge', host: '10.60.0.5', role: 'source',
    windowStart: Date.UTC(2026, 2, 10, 9, 0), windowEnd: Date.UTC(2026, 2, 10, 9, 1),
    feature: 'bytes_out', observed: 1, expected: 0, low: 0, high: 0, score: 5, rule: 'volume-surge/band',
    evidence: {
      top_peers: peer ? [{ peer, count: 9 }, { peer: '10.60.0.2', count: 1 }] : [],
      top_ports: port !== undefined ? [{ port, count: 9 }] : [], sample_flows: [], flows: 1, packets: 1, bytes: 1,
    },
    ...rest,
  };
}

describe('RuleSet', () => {
  it('built-in defaults: DEFAULT_FLOORS, all six detectors, rule id = kind, limits 6/12/25', () => {
    const r = RuleSet.defaults();
    expect(r.floorsFor('10.0.0.1')).toEqual(DEFAULT_FLOORS);
    expect(r.enabledKinds()).toHaveLength(6);
    expect(r.ruleLabel(finding())).toBe('volume-surge/band');
    expect(r.severityLimits).toEqual({ medium: 6, high: 12, critical: 25 });
    expect(r.allows(finding({ peer: '10.60.0.9', port: 873 }))).toBe(true);
  });

  it('per-subnet floors: a stricter floor for guest Wi-Fi, the most specific prefix wins', () => {
    const r = rulesFrom(`
rules:
  - id: volume-surge
    detector: volume-surge
    floors: { bytes: 3000000 }
    subnets:
      - { cidr: 192.168.60.0/24, floors: { bytes: 8000000 } }
      - { cidr: 192.168.60.128/25, floors: { bytes: 9000000, pkts: 1 } }
`);
    expect(r.floorsFor('10.60.0.5').bytes).toBe(3_000_000);
    expect(r.floorsFor('192.168.60.23')).toEqual({ ...DEFAULT_FLOORS, bytes: 8_000_000 });
    expect(r.floorsFor('192.168.60.200')).toEqual({ ...DEFAULT_FLOORS, bytes: 9_000_000, pkts: 1 });
    expect(r.floorsFor('192.168.60.23')).toBe(r.floorsFor('192.168.60.23')); // cached per host
  });

  it('allowlists: host, peer pair (by role), port; counted by reason', () => {
    const r = rulesFrom(`
allow:
  hosts: [203.0.113.0/24]
rules:
  - id: volume-surge
    detector: volume-surge
    allow:
      pairs: ["10.60.0.5 -> 10.60.0.9"]
      ports: [873, "5000-5010"]
`);
    expect(r.allows(finding({ host: '203.0.113.7' }))).toBe(false);
    expect(r.allows(finding({ peer: '10.60.0.9' }))).toBe(false); // 10.60.0.5 sends to 10.60.0.9
    expect(r.allows(finding({ host: '10.60.0.9', role: 'target', peer: '10.60.0.5' }))).toBe(false);
    expect(r.allows(finding({ host: '10.60.0.9', role: 'source', peer: '10.60.0.5' }))).toBe(true); // other direction
    expect(r.allows(finding({ port: 5004 }))).toBe(false);
    expect(r.allows(finding({ port: 5011 }))).toBe(true);
    // another detector's findings are not covered by the volume-surge rule's allowlist
    expect(r.allows(finding({ kind: 'unusual-destination', peer: '10.60.0.9' }))).toBe(true);
    expect(r.dropped).toEqual({ host: 1, pair: 2, port: 1, maintenance: 0 });
  });

  it('a `<->` pair covers both directions', () => {
    const r = rulesFrom('allow: { pairs: ["10.60.0.5 <-> 10.60.0.0/29"] }\n');
    expect(r.allows(finding({ role: 'source', peer: '10.60.0.6' }))).toBe(false);
    expect(r.allows(finding({ host: '10.60.0.6', role: 'source', peer: '10.60.0.5' }))).toBe(false);
  });

  it('maintenance windows in an IANA zone: Sundays 01:00-03:00 Europe/Berlin', () => {
    // Berlin is UTC+1 until the last Sunday of March and UTC+2 after (EU summer time, Directive 2000/84/EC)
    const r = rulesFrom(`
maintenance:
  zone: Europe/Berlin
  weekly:
    - { days: [sun], from: "01:00", to: "03:00" }
    - { days: sunday, from: "23:00", to: "00:30" }
`);
    const at = (iso: string) => finding({ windowStart: Date.parse(iso) });
    expect(r.allows(at('2026-03-08T00:30:00Z'))).toBe(false); // Sun 01:30 CET
    expect(r.allows(at('2026-03-08T01:59:00Z'))).toBe(false); // Sun 02:59 CET
    expect(r.allows(at('2026-03-08T02:00:00Z'))).toBe(true); //  Sun 03:00 CET, end excluded
    expect(r.allows(at('2026-03-07T00:30:00Z'))).toBe(true); //  Sat 01:30 CET
    expect(r.allows(at('2026-04-05T00:30:00Z'))).toBe(false); // Sun 02:30 CEST
    expect(r.allows(at('2026-04-05T01:00:00Z'))).toBe(true); //  Sun 03:00 CEST
    expect(r.dropped.maintenance).toBe(3);
    expect(r.allows(at('2026-03-08T22:15:00Z'))).toBe(false); // Sun 23:15 CET, runs past midnight
    expect(r.allows(at('2026-03-08T23:15:00Z'))).toBe(false); // Mon 00:15 CET
    expect(r.allows(at('2026-03-08T23:30:00Z'))).toBe(true); //  Mon 00:30 CET
  });

  it('rule ids name findings as <rule id>/<variant>; disabled detectors are left out', () => {
    const r = rulesFrom(`
rules:
  - { id: guest-probe, detector: vertical-scan }
  - { id: shift, detector: traffic-shift, enabled: false }
`);
    expect(r.ruleLabel(finding({ kind: 'vertical-scan', rule: 'vertical-scan/prior' }))).toBe('guest-probe/prior');
    expect(r.enabled('traffic-shift')).toBe(false);
    expect(r.enabledKinds()).not.toContain('traffic-shift');
    expect(r.ruleId('volume-surge')).toBe('volume-surge');
  });

  it('severity limits re-map scores', () => {
    const r = rulesFrom('severity: { medium: 4, high: 8, critical: 16 }\n');
    expect([3.9, 4, 7.9, 8, 16, Number.NaN].map((s) => r.severity(s))).toEqual(['low', 'medium', 'medium', 'high', 'critical', 'low']);
    expect(r.hasDefaultSeverity()).toBe(false);
  });
});
