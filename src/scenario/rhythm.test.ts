import { createHash } from 'node:crypto';
import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { FLOW_FIELDS, type FlowRecord } from '../flow/record.js';
import { CidrSet } from '../util/addr.js';
import { generateScenario } from './index.js';
import type { Truth } from './truth.js';

const dir = mkdtempSync(join(tmpdir(), 'tw-rhythm-'));
const sha = (p: string) => createHash('sha256').update(readFileSync(p)).digest('hex');
const HOUR = 3_600_000;

describe('rhythm scenario', async () => {
  // the full eight days at a quarter of the connection rate keeps the test quick
  const a = await generateScenario({ kind: 'rhythm', seed: 5, outDir: join(dir, 'a'), scale: 0.25 });
  const lines = readFileSync(a.dataFile, 'utf8').trimEnd().split('\n');
  const recs = lines.map((l) => JSON.parse(l) as FlowRecord);
  const truth = JSON.parse(readFileSync(a.truthFile, 'utf8')) as Truth;
  const start = Date.parse(truth.start);

  it('is deterministic from the seed', async () => {
    const b = await generateScenario({ kind: 'rhythm', seed: 5, outDir: join(dir, 'b'), scale: 0.25 });
    const c = await generateScenario({ kind: 'rhythm', seed: 6, outDir: join(dir, 'c'), scale: 0.25, hours: 48 });
    const d = await generateScenario({ kind: 'rhythm', seed: 7, outDir: join(dir, 'd'), scale: 0.25, hours: 48 });
    expect(sha(b.dataFile)).toBe(sha(a.dataFile));
    expect(sha(b.truthFile)).toBe(sha(a.truthFile));
    expect(sha(c.dataFile)).not.toBe(sha(d.dataFile));
  });

  it('writes FlowRecord objects with exactly the contract field names, in order, one window each', () => {
    expect(recs.length).toBeGreaterThan(10_000);
    expect(recs.length).toBeLessThan(300_000);
    const keys = FLOW_FIELDS.filter((k) => k !== 'vlan');
    for (const r of recs) {
      expect(Object.keys(r)).toEqual(keys);
      if (Math.floor(r.start / 60_000) !== Math.floor(r.end / 60_000)) throw new Error(`record spans windows: ${JSON.stringify(r)}`);
    }
    for (let i = 1; i < recs.length; i++) expect(recs[i]!.start).toBeGreaterThanOrEqual(recs[i - 1]!.start);
  });

  it('spans eight days from a Wednesday, 25-40 inside hosts, scenario addresses only', () => {
    expect(new Date(start).getUTCDay()).toBe(3);
    expect(Date.parse(truth.end) - start).toBe(192 * HOUR);
    expect(truth.hosts.length).toBeGreaterThanOrEqual(25);
    expect(truth.hosts.length).toBeLessThanOrEqual(40);
    const ok = new CidrSet([...truth.inside, '198.51.100.0/24', '203.0.113.0/24', '192.0.2.0/24']);
    expect(recs.every((r) => ok.has(r.src) && ok.has(r.dst))).toBe(true);
  });

  it('follows clinic hours: weekday daytime busier than nights and the weekend', () => {
    const count = (day: number, h0: number, h1: number) =>
      recs.filter((r) => r.start >= start + day * 24 * HOUR + h0 * HOUR && r.start < start + day * 24 * HOUR + h1 * HOUR).length;
    const thursdayDay = count(1, 9, 17), thursdayNight = count(1, 21, 24) * (8 / 3), sunday = count(4, 9, 17);
    expect(thursdayDay).toBeGreaterThan(3 * thursdayNight);
    expect(thursdayDay).toBeGreaterThan(3 * sunday);
  });

  it('has a nightly backup near 02:00 each night and the daytime burst episode on day 8', () => {
    const backups = truth.benign.filter((b) => b.label === 'nightly-backup');
    expect(backups.length).toBe(8);
    const bytesTo = (s: number, e: number) => recs.filter((r) => r.dport === 873 && r.dst === '10.60.0.9' && r.start >= s && r.start <= e)
      .reduce((n, r) => n + r.bytes, 0);
    for (const b of backups) {
      const s = Date.parse(b.start);
      expect(Math.abs((s % (24 * HOUR)) - 2 * HOUR)).toBeLessThan(10 * 60_000);
      const minutes = (Date.parse(b.end) - s) / 60_000;
      expect(minutes).toBeGreaterThanOrEqual(18);
      expect(minutes).toBeLessThanOrEqual(42);
      expect(bytesTo(s, Date.parse(b.end))).toBeGreaterThan(0.8 * 0.8 * 24e9 * 0.9);
    }
    expect(truth.episodes).toHaveLength(1);
    const e = truth.episodes[0]!;
    expect(e).toMatchObject({ family: 'flood', kind: 'volume-surge', victims: ['10.60.0.9'] });
    const es = Date.parse(e.start);
    expect(Math.floor((es - start) / (24 * HOUR))).toBe(7);
    expect(Math.abs((es % (24 * HOUR)) - 14 * HOUR)).toBeLessThan(10 * 60_000);
    expect(bytesTo(es, Date.parse(e.end))).toBeGreaterThan(15e9);
  });

  it('counts benign host-hours from the records', () => {
    const e = truth.episodes[0]!;
    const es = Date.parse(e.start), ee = Date.parse(e.end);
    const hosts = new Set(truth.hosts);
    const cells = new Set<string>();
    for (const r of recs) {
      if (r.dport === 873 && r.start >= es && r.start <= ee) continue;
      const h = Math.floor((r.start - start) / HOUR);
      for (const x of [r.src, r.dst]) if (hosts.has(x)) cells.add(`${x}/${h}`);
    }
    expect(truth.benign_host_hours).toBe(cells.size);
  });
});
