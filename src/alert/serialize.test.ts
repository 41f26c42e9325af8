import { describe, expect, it } from 'vitest';
import { ALERT_KEYS, type Alert } from './alert.js';
import { alertToJson, MAX_JSON_NUMBER } from './serialize.js';

function alert(over: Partial<Alert> = {}): Alert {
  return {
    schema: 'tidewatch.alert/1', id: 'tw1-0123456789abcdef', kind: 'vertical-scan', severity: 'medium',
    host: '10.60.2.14', role: 'source', start: '2024-05-06T07:00:00.000Z', end: '2024-05-06T07:01:00.000Z',
    state: 'open', feature: 'max_ports_per_peer', observed: 812, expected: 1.23456789, low: 0, high: 4.00004,
    score: 7.456, rule: 'scan.vertical', sensor: 'clinic-gw',
    evidence: {
      zeta: 'z', top_peers: [{ peer: '10.60.0.5', count: 812 }], top_ports: [{ port: 22, count: 3 }],
      sample_flows: [{ outcome: 'rejected', start: '2024-05-06T07:00:01.000Z', proto: 6, src: '10.60.2.14', dst: '10.60.0.5', sport: 40001, dport: 22, pkts: 1, bytes: 44, rpkts: 1, rbytes: 40 }],
      bytes: 1000, packets: 10, flows: 5, failure_ratio: 0.97123456, alpha: 'a', nested: { no: 1 },
    },
    ...over,
  };
}

describe('alertToJson', () => {
  it('writes keys in the contract order (DESIGN.md section 4) and evidence keys in the fixed order', () => {
    const line = alertToJson(alert());
    const parsed = JSON.parse(line) as Record<string, unknown>;
    expect(Object.keys(parsed)).toEqual([...ALERT_KEYS]);
    expect(Object.keys(parsed.evidence as object)).toEqual(
      ['top_peers', 'top_ports', 'sample_flows', 'flows', 'packets', 'bytes', 'alpha', 'failure_ratio', 'zeta']);
    const flow = (parsed.evidence as { sample_flows: object[] }).sample_flows[0]!;
    expect(Object.keys(flow)).toEqual(['start', 'proto', 'src', 'dst', 'sport', 'dport', 'pkts', 'bytes', 'rpkts', 'rbytes', 'outcome']);
    expect(line).not.toContain('\n'); // JSON Lines: one value per line (jsonlines.org)
    expect(line).not.toContain(' ');
  });

  it('rounds observed/expected/low/high to 4 decimals and score to 2', () => {
    const p = JSON.parse(alertToJson(alert())) as Alert;
    expect(p.expected).toBe(1.2346);
    expect(p.high).toBe(4);
    expect(p.score).toBe(7.46);
    expect(p.evidence.failure_ratio).toBe(0.9712);
  });

  it('never writes NaN or Infinity (RFC 8259 has no such numbers): clamps to 2^53-1, NaN to 0', () => {
    const line = alertToJson(alert({ observed: Infinity, expected: NaN, low: -Infinity, score: 1e300 }));
    const p = JSON.parse(line) as Alert;
    expect(p.observed).toBe(MAX_JSON_NUMBER);
    expect(p.expected).toBe(0);
    expect(p.low).toBe(-MAX_JSON_NUMBER);
    expect(p.score).toBe(MAX_JSON_NUMBER);
    expect(line).not.toMatch(/NaN|Infinity|-0[,}]/);
  });

  it('writes counts as non-negative integers', () => {
    const e = alert().evidence;
    const p = JSON.parse(alertToJson(alert({ evidence: { ...e, flows: 4.6, bytes: -3, packets: NaN, top_peers: [{ peer: 'x', count: 2.2 }] } }))) as Alert;
    expect([p.evidence.flows, p.evidence.bytes, p.evidence.packets, p.evidence.top_peers[0]!.count]).toEqual([5, 0, 0, 2]);
  });

  it('escapes U+2028/U+2029 and quotes in strings (METHODS 8.2)', () => {
    const line = alertToJson(alert({ sensor: 'a\u2028b\u2029"c' }));
    expect(line).toContain('"sensor":"a\\u2028b\\u2029\\"c"');
    expect((JSON.parse(line) as Alert).sensor).toBe('a\u2028b\u2029"c');
  });
});
