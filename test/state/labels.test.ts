import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { generateScenario } from '../../src/scenario/index.js';
import type { Alert } from '../../src/alert/alert.js';
import { raiseSeverity } from '../../src/alert/severity.js';
import { cli, LARKSPUR_INSIDE, splitPcap } from './helpers.js';

// Analyst feedback (issue 5 acceptance): a 2-hour incident capture with the vertical scan twice
// (generateScenario `episodes`, docs/scenario.md), replayed in two runs with one state split between
// the scans. A benign label on the first scan's episode suppresses the second scan; a malicious label
// raises the second scan's severity by one step. The expected behaviour is the issue's; no outside source.
const dir = mkdtempSync(join(tmpdir(), 'tidewatch-labels-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const SPLIT = Date.UTC(2026, 2, 10, 10, 0); // between the scans (09:34 and 10:16)
const SCANNER = '192.168.60.23';
const [a, b] = [join(dir, 'a.pcap'), join(dir, 'b.pcap')];
const common = ['--internal', LARKSPUR_INSIDE.join(','), '--format', 'jsonl', '--quiet', '--sensor', 't'];
const parse = (out: string) => out.split('\n').filter(Boolean).map((l) => JSON.parse(l) as Alert);
const scans = (as: Alert[]) => as.filter((x) => x.kind === 'vertical-scan' && x.host === SCANNER);

/** First half into a new state; returns the first scan's episode id. */
function firstHalf(db: string): string {
  const r = cli(['replay', a, '--state', db, ...common]);
  expect(r.status).toBe(0);
  const ids = [...new Set(scans(parse(r.stdout)).map((x) => x.id))];
  expect(ids.length).toBe(1);
  return ids[0]!;
}

let plain: Alert[] = [];
beforeAll(async () => {
  const { dataFile } = await generateScenario({ kind: 'incident', seed: 1, outDir: dir, hours: 2, episodes: ['vertical-scan', 'vertical-scan'] });
  splitPcap(dataFile, SPLIT, a, b);
  rmSync(dataFile);
  const db = join(dir, 'plain.db');
  firstHalf(db);
  plain = parse(cli(['replay', b, '--state', db, ...common]).stdout);
  expect(scans(plain).length).toBeGreaterThanOrEqual(2); // the recurrence opens and closes without labels
});

describe('labels', () => {
  it('a benign label suppresses the recurring scan; --show-suppressed shows it marked', () => {
    const db = join(dir, 'benign.db');
    const id = firstHalf(db);
    const label = cli(['label', id, 'benign', '--note', 'authorised audit', '--state', db]);
    expect(label.status).toBe(0);
    expect(label.stdout).toMatch(/^label 1: benign episode from tw1-/);

    const second = parse(cli(['replay', b, '--state', db, ...common]).stdout);
    expect(scans(second)).toEqual([]);
    // other alerts are untouched: the scope is this episode's kind, host and role
    expect(second.map((x) => x.id)).toEqual(plain.filter((x) => !scans([x]).length).map((x) => x.id));

    const stored = parse(cli(['alerts', '--state', db, '--kind', 'vertical-scan']).stdout);
    expect(stored.map((x) => x.id)).toEqual([id, id]); // only the labelled first episode's lines
    const all = scans(parse(cli(['alerts', '--state', db, '--kind', 'vertical-scan', '--show-suppressed']).stdout));
    const hidden = all.filter((x) => x.id !== id);
    expect(hidden.map((x) => [x.id, x.state, x.severity])).toEqual(scans(plain).map((x) => [x.id, x.state, x.severity]));
    for (const x of hidden) expect(x.evidence.suppressed_by).toBe(1);

    // the same run with --show-suppressed: the feed keeps the lines, marked
    const db2 = join(dir, 'benign-shown.db');
    expect(cli(['label', firstHalf(db2), 'benign', '--state', db2]).status).toBe(0);
    const shown = scans(parse(cli(['replay', b, '--state', db2, '--show-suppressed', ...common]).stdout));
    expect(shown).toEqual(hidden);

    expect(cli(['labels', '--state', db]).stdout).toMatch(/label 1: benign episode .*vertical-scan 192\.168\.60\.23 source peer 10\.60\.0\.5.*"authorised audit"/);
  });

  it('a malicious label raises the recurring scan one severity step', () => {
    const db = join(dir, 'malicious.db');
    const id = firstHalf(db);
    expect(cli(['label', id, 'malicious', '--state', db]).status).toBe(0);
    const second = scans(parse(cli(['replay', b, '--state', db, ...common]).stdout));
    expect(second.map((x) => [x.id, x.state, x.severity])).toEqual(scans(plain).map((x) => [x.id, x.state, raiseSeverity(x.severity)]));
    for (const x of second) expect(x.evidence.raised_by).toBe(1);
  });

  it('refuses an unknown alert id and a missing state file', () => {
    const db = join(dir, 'plain.db');
    expect(cli(['label', 'tw1-0000000000000000', 'benign', '--state', db]).status).toBe(2);
    expect(cli(['labels', '--state', join(dir, 'none.db')]).status).toBe(2);
  });
});
