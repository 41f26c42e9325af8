import { readFileSync } from 'node:fs';
import { Ajv } from 'ajv';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { ALERT_KINDS, type Finding, type SampleFlow } from '../detect/finding.js';
import { OUTCOMES } from '../flow/record.js';
import { rfc3339 } from '../util/time.js';
import { ALERT_KEYS, type Alert } from './alert.js';
import { EpisodeTracker } from './episodes.js';
import { alertToJson } from './serialize.js';

// ajv 8's default export validates JSON Schema draft-07 (ajv documentation), the draft the file declares.
const schema = JSON.parse(readFileSync(new URL('../../docs/alert-schema.json', import.meta.url), 'utf8')) as { required: string[] };
const validate = new Ajv({ allErrors: true }).compile(schema);

const W = 60_000;
const T0 = Date.UTC(2024, 4, 6, 0, 0, 0);

const host = fc.oneof(
  fc.integer({ min: 0, max: 255 }).map((n) => `10.60.1.${n}`),
  fc.integer({ min: 0, max: 0xffff }).map((n) => `2001:db8:60::${n.toString(16)}`),
);
const weird = fc.constantFrom(NaN, Infinity, -Infinity, 1e300, -0, 1e-9);
const value = fc.oneof({ weight: 5, arbitrary: fc.double({ min: -1e6, max: 1e12, noNaN: true }) }, { weight: 1, arbitrary: weird });
const sampleFlow: fc.Arbitrary<SampleFlow> = fc.record({
  start: fc.integer({ min: T0, max: T0 + 86_400_000 }).map(rfc3339),
  proto: fc.constantFrom(1, 6, 17, 58), src: host, dst: host,
  sport: fc.integer({ min: 0, max: 65535 }), dport: fc.integer({ min: 0, max: 65535 }),
  pkts: fc.nat(), bytes: fc.nat(), rpkts: fc.nat(), rbytes: fc.nat(), outcome: fc.constantFrom(...OUTCOMES),
});
const finding = fc.record({
  kind: fc.constantFrom(...ALERT_KINDS),
  host,
  role: fc.constantFrom('source' as const, 'target' as const),
  window: fc.integer({ min: 0, max: 180 }),
  feature: fc.constantFrom('distinct_dst_ports', 'bytes_out', 'failure_ratio', 'entropy_dst_ports'),
  observed: value, expected: value, low: value, high: value,
  score: fc.oneof({ weight: 5, arbitrary: fc.double({ min: 3, max: 80, noNaN: true }) }, { weight: 1, arbitrary: weird }),
  peers: fc.array(fc.record({ peer: host, count: fc.integer({ min: 1, max: 1e6 }) }), { maxLength: 12 }),
  ports: fc.array(fc.record({ port: fc.integer({ min: 0, max: 65535 }), count: fc.integer({ min: 1, max: 1e6 }) }), { maxLength: 12 }),
  samples: fc.array(sampleFlow, { maxLength: 6 }),
  extra: fc.dictionary(fc.constantFrom('failure_ratio', 'peer', 'port', 'trw_log_ratio', 'note\u2028x'), fc.oneof(fc.double(), fc.string())),
});

type FindingSpec = typeof finding extends fc.Arbitrary<infer T> ? T : never;

function toFinding(r: FindingSpec): Finding {
  const windowStart = T0 + r.window * W;
  return {
    kind: r.kind, host: r.host, role: r.role, windowStart, windowEnd: windowStart + W, feature: r.feature,
    observed: r.observed, expected: r.expected, low: r.low, high: r.high, score: r.score, rule: 'test.rule',
    evidence: {
      ...r.extra, top_peers: r.peers.slice(0, 10), top_ports: r.ports.slice(0, 10), sample_flows: r.samples.slice(0, 5),
      flows: r.peers.length, packets: r.samples.length * 3, bytes: r.samples.reduce((s, f) => s + f.bytes, 0),
    },
  };
}

function alertsFor(findings: Finding[], mode: 'replay' | 'live', budget: number | undefined): Alert[] {
  const out: Alert[] = [];
  const t = new EpisodeTracker({ windowMs: W, sensor: 'clinic-gw', mode, maxAlertsPerHour: budget, updateEveryMs: 5 * W }, (a) => out.push(a));
  for (let w = 0; w <= 180; w++) t.observe(findings.filter((f) => f.windowStart === T0 + w * W), T0 + w * W, T0 + (w + 1) * W);
  t.finish();
  return out;
}

describe('docs/alert-schema.json', () => {
  it('lists the contract keys in wire order', () => {
    expect(schema.required).toEqual([...ALERT_KEYS]);
  });

  it('accepts every line the tracker and serializer emit for random findings', () => {
    let lines = 0;
    fc.assert(fc.property(fc.array(finding, { minLength: 1, maxLength: 40 }), fc.constantFrom('replay' as const, 'live' as const),
      fc.option(fc.integer({ min: 1, max: 5 }), { nil: undefined }), (rs, mode, budget) => {
        for (const a of alertsFor(rs.map(toFinding), mode, budget)) {
          const line = alertToJson(a);
          lines++;
          if (!validate(JSON.parse(line))) throw new Error(`${JSON.stringify(validate.errors)}\n${line}`);
          expect(Object.keys(JSON.parse(line) as object)).toEqual([...ALERT_KEYS]);
        }
      }), { numRuns: 150 });
    expect(lines).toBeGreaterThan(300);
  });

  it('rejects lines that break the contract', () => {
    const good = JSON.parse(alertToJson(alertsFor([toFinding({
      kind: 'vertical-scan', host: '10.60.2.14', role: 'source', window: 0, feature: 'distinct_dst_ports', observed: 812,
      expected: 1, low: 0, high: 4, score: 14, peers: [], ports: [], samples: [], extra: {},
    })], 'replay', undefined)[0]!)) as Record<string, unknown>;
    expect(validate(good)).toBe(true);
    const bad: Record<string, unknown>[] = [
      { ...good, extra: 1 },
      { ...good, kind: 'port-scan' },
      { ...good, start: '2024-05-06T07:00:00Z' },
      { ...good, schema: 'tidewatch.alert/2' },
      { ...good, evidence: { ...(good.evidence as object), nested: { a: 1 } } },
      Object.fromEntries(Object.entries(good).filter(([k]) => k !== 'rule')),
    ];
    for (const b of bad) expect(validate(b)).toBe(false);
  });
});
