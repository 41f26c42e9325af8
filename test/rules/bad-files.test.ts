import { writeFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { loadRules } from '../../src/rules/load.js';
import { MAX_RULE_FILE_BYTES } from '../../src/rules/source.js';
import { ruleFile } from '../../src/rules/testing.js';

const BAD = 'test/rules/bad';

/**
 * Every malformed file under test/rules/bad/ and the exact messages it gives, in order. Positions are
 * 1-based line:column of the offending node (the yaml package's LineCounter, our convention).
 */
const CASES: [file: string, messages: string[]][] = [
  ['bad-cidr.yaml', ["5:26: not a CIDR or address: '10.60.0.300/24'"]],
  ['bad-subnet.yaml', ["5:15: not a CIDR or address: '192.168.60.0/33'"]],
  ['unknown-detector.yaml', ["3:15: unknown detector 'port-sweep' (expected volume-surge, fan-in-flood, horizontal-scan, vertical-scan, unusual-destination, traffic-shift)"]],
  ['unknown-key.yaml', ["4:5: unknown key 'threshold' in a rule (expected id, detector, enabled, description, floors, subnets, allow, maintenance)"]],
  ['wrong-type.yaml', ["4:14: enabled must be true or false, got a string ('yes')"]],
  ['floor-wrong-type.yaml', ["5:21: newPeerBytes must be a number, got a string ('1 MB')"]],
  ['overlapping-ranges.yaml', ['8:11: maintenance range sat,sun 02:30-04:00 overlaps sun 01:00-03:00 at test/rules/bad/overlapping-ranges.yaml:7:11']],
  ['bad-time-zone.yaml', ["2:9: unknown time zone 'Europe/Atlantis' (expected an IANA name such as Europe/Berlin)"]],
  ['bad-weekday.yaml', ["4:21: bad weekday 'funday' (expected mon, tue, wed, thu, fri, sat, sun)"]],
  ['bad-time.yaml', ["6:11: bad time '25:00' (expected HH:MM from 00:00 to 24:00)"]],
  ['duplicate-rule-id.yaml', ["4:9: duplicate rule id 'scans', first at test/rules/bad/duplicate-rule-id.yaml:2:9"]],
  ['two-rules-one-detector.yaml', ['5:15: detector volume-surge already has a rule at test/rules/bad/two-rules-one-detector.yaml:3:15']],
  ['negative-floor.yaml', ['5:14: bytes must be a whole number >= 0, got -1']],
  ['ratio-below-one.yaml', ['5:19: surgeRatio must be a ratio >= 1, got 0.5']],
  ['floor-not-read.yaml', ["5:7: floor 'scanPorts' is not read by fan-in-flood (it reads floodSources, floodFailedShare, floodPackets)"]],
  ['shared-floor-conflict.yaml', ['7:27: scanFailed is 20 at test/rules/bad/shared-floor-conflict.yaml:4:27; horizontal-scan and vertical-scan share it, so both must agree']],
  ['severity-order.yaml', ['2:3: severity limits must rise: medium < high < critical, got 6, 30, 25']],
  ['port-out-of-range.yaml', ['2:16: port out of range: 70000 (expected 0 to 65535)']],
  ['malformed-pair.yaml', ["4:7: peer pair malformed: '10.60.0.5 to 10.60.0.9' (expected 'ADDRESS -> ADDRESS' or 'ADDRESS <-> ADDRESS', CIDRs allowed)"]],
  ['custom-tag.yaml', ['3:22: tags are not allowed in rule files (!shell)']],
  ['alias.yaml', ['2:18: anchors are not allowed in rule files', '7:14: aliases are not allowed in rule files']],
  // the yaml package's own message and position (the unclosed flow sequence is noticed at the next item)
  ['yaml-syntax.yaml', ['4:3: YAML syntax: Flow sequence in block collection must be sufficiently indented and end with a ]']],
];

describe('malformed rule files give file:line:column: reason', () => {
  it.each(CASES)('%s', (file, messages) => {
    const r = loadRules(`${BAD}/${file}`);
    expect('errors' in r && r.errors).toEqual(messages.map((m) => `${BAD}/${file}:${m}`));
  });

  it('lists every file under test/rules/bad/', async () => {
    const { readdirSync } = await import('node:fs');
    expect(readdirSync(BAD).sort()).toEqual(CASES.map(([f]) => f).sort());
  });

  it('refuses a file over the size cap before parsing it', () => {
    const file = ruleFile('');
    writeFileSync(file, `#${' '.repeat(MAX_RULE_FILE_BYTES)}\n`);
    expect(loadRules(file)).toEqual({ errors: [`${file}:1:1: file too large (${MAX_RULE_FILE_BYTES + 2} bytes, at most ${MAX_RULE_FILE_BYTES})`] });
  });

  it('a folder collects the errors of all its files (ids and detectors are unique across files)', () => {
    const r = loadRules(BAD);
    expect('errors' in r).toBe(true);
    const errors = 'errors' in r ? r.errors : [];
    expect(errors).toContain(`${BAD}/unknown-key.yaml:3:15: detector volume-surge already has a rule at ${BAD}/bad-cidr.yaml:3:15`);
  });

  it('JSON rule files read the same way, positions included', () => {
    const file = ruleFile('{\n  "rules": [\n    {"id": "volume-surge", "detector": "volume-surge", "floors": {"bytes": "2MB"}}\n  ]\n}\n', 'site.json');
    expect(loadRules(file)).toEqual({ errors: [`${file}:3:76: bytes must be a number, got a string ('2MB')`] });
    expect(loadRules(ruleFile('{"rules": [{"id": "a", "detector": "traffic-shift", "enabled": false}]}', 'ok.json'))).toHaveProperty('ok');
  });

  it('a weekday listed twice in one range is an error', () => {
    const file = ruleFile('maintenance: { zone: UTC, weekly: [{ days: [sun, Sunday], from: "01:00", to: "02:00" }] }\n');
    expect(loadRules(file)).toEqual({ errors: [`${file}:1:50: weekday 'Sunday' is listed twice`] });
  });

  it('a missing path and an empty folder are errors too', () => {
    expect(loadRules('test/rules/no-such')).toEqual({ errors: ['test/rules/no-such:1:1: no such file or folder'] });
    const dir = ruleFile('', 'notes.txt').replace(/\/notes\.txt$/, '');
    expect(loadRules(dir)).toEqual({ errors: [`${dir}:1:1: no rule files (.yaml, .yml, .json) in this folder`] });
  });
});
