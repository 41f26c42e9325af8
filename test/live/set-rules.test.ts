import { mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Alert } from '../../src/alert/alert.js';
import type { FlowRecord } from '../../src/flow/record.js';
import { ingestInput } from '../../src/ingest/index.js';
import { DEFAULT_INGEST } from '../../src/ingest/types.js';
import { loadRules } from '../../src/rules/load.js';
import type { RuleSet } from '../../src/rules/ruleset.js';
import type { Truth } from '../../src/scenario/truth.js';
import { Sensor } from '../../src/sensor/sensor.js';
import { DEMO_PCAP, DEMO_TRUTH } from './helpers.js';

// Sensor.setRules (the SIGHUP reload): a rule set swapped in mid-run governs the windows that close
// after it: a disabled detector stops raising alerts, new severity limits re-map the severity.
const dir = mkdtempSync(join(tmpdir(), 'tidewatch-set-rules-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
const truth = JSON.parse(readFileSync(DEMO_TRUTH, 'utf8')) as Truth;
let records: FlowRecord[] = [];
beforeAll(async () => {
  await ingestInput(DEMO_PCAP, (r) => { records.push(r); }, { ...DEFAULT_INGEST });
});

function rules(name: string, yaml: string): RuleSet {
  const d = join(dir, name);
  mkdirSync(d);
  writeFileSync(join(d, 'r.yaml'), yaml);
  const r = loadRules(d);
  if ('errors' in r) throw new Error(r.errors.join('\n'));
  return r.ok;
}

function run(swap: RuleSet | null, atMs: number): Alert[] {
  const out: Alert[] = [];
  const s = new Sensor({ windowMs: 60_000, latenessMs: 5_000, alpha: 0.001, internal: truth.inside, sensor: 't', mode: 'live' }, (a) => out.push(a));
  let swapped = false;
  for (const r of records) {
    if (swap && !swapped && r.end >= atMs) { s.setRules(swap); swapped = true; }
    s.record(r);
  }
  s.finish();
  return out;
}

describe('Sensor.setRules', () => {
  it('swaps enabled detectors and severity limits for the windows after the swap', () => {
    const scan = truth.episodes.find((e) => e.kind === 'vertical-scan')!;
    const before = run(null, 0);
    expect(before.some((a) => a.kind === 'vertical-scan')).toBe(true);
    const off = rules('off', 'rules:\n  - id: vertical-scan\n    detector: vertical-scan\n    enabled: false\n');
    // swapped in before the scan begins: no vertical-scan alert, the other kinds unchanged
    const after = run(off, Date.parse(scan.start) - 120_000);
    expect(after.some((a) => a.kind === 'vertical-scan')).toBe(false);
    expect(after.filter((a) => a.kind !== 'vertical-scan').map((a) => a.id)).toEqual(before.filter((a) => a.kind !== 'vertical-scan').map((a) => a.id));
    // every score past 3.2 maps to critical under these limits
    const loud = rules('loud', 'severity:\n  medium: 3.1\n  high: 3.15\n  critical: 3.2\n');
    const louder = run(loud, 0);
    expect(louder.map((a) => a.id)).toEqual(before.map((a) => a.id));
    for (const a of louder) if (a.score > 3.2) expect(a.severity).toBe('critical');
  });
});
