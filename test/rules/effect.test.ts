import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { replayFiles } from '../e2e/run-sensor.js';
import { loadRules, shippedRulesDir } from '../../src/rules/load.js';
import { DEFAULT_FLOORS } from '../../src/detect/thresholds.js';
import { SEVERITY_LIMITS } from '../../src/alert/severity.js';
import { ALERT_KINDS } from '../../src/detect/finding.js';
import { RuleSet } from '../../src/rules/ruleset.js';
import { rulesFrom } from '../../src/rules/testing.js';
import { parseSensorOptions } from '../../src/cli/options.js';
import { DEFAULT_INTERNAL } from '../../src/util/addr.js';

const capture = 'captures/larkspur-demo.pcap';
const truth = JSON.parse(readFileSync('captures/larkspur-demo.truth.json', 'utf8')) as { inside: string[] };
const INSIDE = ['10.0.0.0/8', '192.168.0.0/16', '2001:db8:60::/48'];

function shipped(): RuleSet {
  const r = loadRules(shippedRulesDir());
  if ('errors' in r) throw new Error(r.errors.join('\n'));
  return r.ok;
}

describe('the shipped rules/ set is the built-in defaults', () => {
  it('same floors, limits, detectors and rule ids', () => {
    const r = shipped();
    expect(r.floorsFor('10.60.0.5')).toEqual(DEFAULT_FLOORS);
    expect(r.severityLimits).toEqual(SEVERITY_LIMITS);
    expect(r.enabledKinds()).toEqual([...ALERT_KINDS]);
    expect(r.rules.map((x) => x.id).sort()).toEqual([...ALERT_KINDS].sort());
    expect(r.inside).toBeNull();
  });

  it('same alerts on the bundled demo capture', async () => {
    const builtIn = await replayFiles([capture], INSIDE);
    const rules = shipped();
    const withRules = await replayFiles([capture], INSIDE, { rules });
    expect(builtIn.lines.length).toBeGreaterThan(5);
    expect(withRules.lines).toEqual(builtIn.lines);
    expect(rules.dropped).toEqual({ host: 0, pair: 0, port: 0, maintenance: 0 });
  });
});

describe('rules take effect on the bundled demo capture', () => {
  it('allowlisted host and peer pair, disabled detector, renamed rule, own severity limits', async () => {
    const base = await replayFiles([capture], truth.inside);
    const has = (alerts: typeof base.alerts, kind: string, host: string) => alerts.some((a) => a.kind === kind && a.host === host);
    expect(has(base.alerts, 'vertical-scan', '192.168.60.23')).toBe(true);
    expect(has(base.alerts, 'volume-surge', '198.51.100.77')).toBe(true);
    expect(base.alerts.some((a) => a.kind === 'traffic-shift')).toBe(true);
    const rules = rulesFrom(`
severity: { medium: 4.5, high: 50, critical: 100 }
rules:
  - id: guest-probe
    detector: horizontal-scan
  - id: volume-surge
    detector: volume-surge
    allow:
      pairs: ["10.60.2.40 -> 198.51.100.77"]
  - id: vertical-scan
    detector: vertical-scan
    allow:
      hosts: [192.168.60.23]
  - id: traffic-shift
    detector: traffic-shift
    enabled: false
`);
    const { alerts } = await replayFiles([capture], truth.inside, { rules });
    expect(has(alerts, 'vertical-scan', '192.168.60.23')).toBe(false);
    // the pair covers the sender's outbound surge and the receiver's inbound one
    expect(has(alerts, 'volume-surge', '10.60.2.40')).toBe(false);
    expect(has(alerts, 'volume-surge', '198.51.100.77')).toBe(false);
    expect(alerts.some((a) => a.kind === 'traffic-shift')).toBe(false);
    expect(rules.dropped.host).toBeGreaterThan(0);
    expect(rules.dropped.pair).toBeGreaterThan(0);
    const scan = alerts.filter((a) => a.kind === 'horizontal-scan');
    expect(scan.length).toBeGreaterThan(0);
    expect(scan.every((a) => a.rule === 'guest-probe/prior')).toBe(true);
    for (const a of alerts) expect(a.severity).toBe(a.score >= 50 ? 'high' : a.score >= 4.5 ? 'medium' : 'low');
    // what the rules did not name is untouched
    expect(alerts.filter((a) => a.kind === 'fan-in-flood')).toEqual(base.alerts.filter((a) => a.kind === 'fan-in-flood').map((a) => ({ ...a, severity: 'medium' })));
  });

  it('a maintenance window drops the findings inside it; a stricter guest Wi-Fi floor drops the guest scan', async () => {
    const rules = rulesFrom(`
maintenance:
  zone: UTC
  weekly:
    - { days: [tue], from: "09:40", to: "09:55" }
rules:
  - id: vertical-scan
    detector: vertical-scan
    subnets:
      - { cidr: 192.168.60.0/24, floors: { scanPorts: 5000 } }
`);
    const { alerts } = await replayFiles([capture], truth.inside, { rules });
    const startsInside = (a: { start: string }) => a.start >= '2026-03-10T09:40' && a.start < '2026-03-10T09:55';
    expect(alerts.some(startsInside)).toBe(false);
    expect(rules.dropped.maintenance).toBeGreaterThan(0);
    expect(alerts.some((a) => a.kind === 'vertical-scan')).toBe(false);
    expect(alerts.some((a) => a.kind === 'horizontal-scan')).toBe(true);
  });
});

describe('inside networks', () => {
  const raw = { window: '60s', alpha: '0.001', sensor: 's' };
  it('the rule set inside list replaces the default; an explicit --internal wins', () => {
    const file = 'test/rules/good/larkspur-site.yaml';
    expect(parseSensorOptions({ ...raw, rules: file }).sensor.internal).toEqual(truth.inside);
    expect(parseSensorOptions({ ...raw, rules: file, internal: '10.0.0.0/8' }).sensor.internal).toEqual(['10.0.0.0/8']);
    expect(parseSensorOptions(raw).sensor.internal).toEqual(DEFAULT_INTERNAL);
  });

  it('an invalid rule set stops the command with exit 2 and every message', () => {
    expect(() => parseSensorOptions({ ...raw, rules: 'test/rules/bad/bad-cidr.yaml' }))
      .toThrow(expect.objectContaining({ exitCode: 2, message: expect.stringContaining("bad-cidr.yaml:5:26: not a CIDR or address: '10.60.0.300/24'") }));
  });
});
