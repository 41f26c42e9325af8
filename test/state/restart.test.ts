import { mkdtempSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { generateScenario } from '../../src/scenario/index.js';
import type { FlowRecord } from '../../src/flow/record.js';
import { cli, LARKSPUR_INSIDE, learnedState, lineKeys, readRecords, runWithState, splitPcap, storedLines } from './helpers.js';

// Restart equivalence (issue 5 acceptance): the 2-hour incident scenario (docs/scenario.md) replayed
// whole with --state, and in two runs split at a window boundary with the same state, store the same
// alert lines and end with the same learned state. Expected values come from our own whole run; no
// outside source.
const dir = mkdtempSync(join(tmpdir(), 'tidewatch-restart-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

let records: FlowRecord[] = [];
let pcap = '';
beforeAll(async () => {
  ({ dataFile: pcap } = await generateScenario({ kind: 'incident', seed: 1, outDir: dir, hours: 2 }));
  records = await readRecords(pcap);
});

const SPLIT = Date.UTC(2026, 2, 10, 9, 33); // inside E1 (vertical scan 09:31:41-09:34:41): an episode spans it

describe('restart equivalence', () => {
  it('two runs split at a window boundary store the same lines and state as one run', () => {
    const whole = join(dir, 'whole.db');
    const split = join(dir, 'split.db');
    runWithState(whole, records);
    const first = runWithState(split, records.filter((r) => r.start < SPLIT));
    expect(first.some((a) => a.kind === 'vertical-scan' && a.state === 'open')).toBe(true);
    expect(first.some((a) => a.kind === 'vertical-scan' && a.state === 'closed')).toBe(false); // still open at the split
    runWithState(split, records.filter((r) => r.start >= SPLIT));

    const a = storedLines(whole);
    const b = storedLines(split);
    expect(a.length).toBeGreaterThan(10);
    expect(b).toEqual(a);
    const ids = new Set(a.map((l) => JSON.parse(l.json).id as string));
    expect(ids.size).toBeGreaterThanOrEqual(8); // episodes before and after the split
    expect(learnedState(split)).toEqual(learnedState(whole));
    expect(statSync(whole).mode & 0o777).toBe(0o600);
  });

  it.each(['replay', 'live'] as const)('holds with an hourly alert budget in %s mode (held hours cross the split)', (mode) => {
    const extra = { maxAlertsPerHour: 1, mode };
    const whole = join(dir, `budget-${mode}-whole.db`);
    const split = join(dir, `budget-${mode}-split.db`);
    runWithState(whole, records, extra);
    runWithState(split, records.filter((r) => r.start < SPLIT), extra);
    runWithState(split, records.filter((r) => r.start >= SPLIT), extra);
    expect(storedLines(whole).length).toBeGreaterThan(0);
    expect(storedLines(split)).toEqual(storedLines(whole));
    expect(learnedState(split)).toEqual(learnedState(whole));
  });
});

describe('restart equivalence across an input gap', () => {
  it('a gap recorded in the first run still counts as missing input for hosts that come back in the second', () => {
    // host A talks in windows 0-29, no input at all in 30-39 (a capture gap), host B in 40-59, A again
    // in 60-89; the split at window 50 falls after the gap and before A comes back
    const W = 60_000, T0 = Date.UTC(2026, 2, 10, 9, 0);
    const rec = (w: number, i: number, src: string): FlowRecord => {
      const t = T0 + w * W + i * 1000;
      return { start: t, end: t + 20, proto: 6, src, dst: '198.51.100.20', sport: 40_000 + i, dport: 443, pkts: 3 + (w % 3), bytes: 300 + 10 * (w % 5),
        rpkts: 3, rbytes: 900, flags: 0x1b, rflags: 0x1b, outcome: 'established', exporter: 't' };
    };
    const all: FlowRecord[] = [];
    for (let w = 0; w < 90; w++) {
      if (w >= 30 && w < 40) continue;
      const src = w < 30 || w >= 60 ? '10.60.1.10' : '10.60.1.11';
      for (let i = 0; i < 5; i++) all.push(rec(w, i, src));
    }
    const whole = join(dir, 'gap-whole.db');
    const split = join(dir, 'gap-split.db');
    runWithState(whole, all);
    runWithState(split, all.filter((r) => r.start < T0 + 50 * W));
    runWithState(split, all.filter((r) => r.start >= T0 + 50 * W));
    expect(learnedState(split)).toEqual(learnedState(whole));
  });
});

describe('restart equivalence through the CLI', () => {
  it('replay of the capture in two halves with one --state gives the alert ids of the whole replay', () => {
    const args = ['--internal', LARKSPUR_INSIDE.join(','), '--format', 'jsonl', '--quiet', '--sensor', 't'];
    const whole = cli(['replay', pcap, ...args, '--state', join(dir, 'cli-whole.db')]);
    expect(whole.status).toBe(0);
    const [a, b] = [join(dir, 'a.pcap'), join(dir, 'b.pcap')];
    splitPcap(pcap, SPLIT, a, b);
    const db = join(dir, 'cli-split.db');
    const first = cli(['replay', a, ...args, '--state', db]);
    const second = cli(['replay', b, ...args, '--state', db]);
    expect([first.status, second.status]).toEqual([0, 0]);
    // flows crossing the cut restart in the second file (no TCP state), yet every line agrees
    expect(lineKeys(first.stdout + second.stdout)).toEqual(lineKeys(whole.stdout));
    const stored = cli(['alerts', '--state', db]);
    expect(lineKeys(stored.stdout)).toEqual(lineKeys(whole.stdout));
    expect(new Set(lineKeys(whole.stdout).map((k) => k.split(' ')[0])).size).toBeGreaterThanOrEqual(8);
  });
});
