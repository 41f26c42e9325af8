import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Alert } from '../../src/alert/alert.js';
import { alertToJson } from '../../src/alert/serialize.js';
import { StateStore } from '../../src/store/store.js';
import { cli } from './helpers.js';

// `tidewatch alerts`: filters and the three formats over a state file with known lines. CSV quoting
// per RFC 4180 section 2; the rest is ours (docs/operations.md).
const dir = mkdtempSync(join(tmpdir(), 'tidewatch-alerts-'));
const db = join(dir, 'state.db');
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function alert(over: Partial<Alert>): Alert {
  return {
    schema: 'tidewatch.alert/1', id: 'tw1-a', kind: 'vertical-scan', severity: 'low', host: '192.168.60.23', role: 'source',
    start: '2026-03-10T09:31:00.000Z', end: '2026-03-10T09:32:00.000Z', state: 'open', feature: 'max_ports_per_peer',
    observed: 106, expected: 2, low: 0, high: 38, score: 5.11,
    evidence: { top_peers: [], top_ports: [], sample_flows: [], flows: 120, packets: 240, bytes: 9600, peer: '10.60.0.5' },
    rule: 'vertical-scan/prior', sensor: 'clinic, north', ...over,
  };
}

beforeAll(() => {
  const s = StateStore.open(db);
  const lines = [
    alert({}),
    alert({ id: 'tw1-b', kind: 'fan-in-flood', host: '10.60.0.6', role: 'target', severity: 'high', score: 12.85, start: '2026-03-10T10:05:00.000Z', end: '2026-03-10T10:06:00.000Z' }),
    alert({ state: 'closed', severity: 'medium', end: '2026-03-10T09:35:00.000Z', score: 11.39 }),
  ];
  for (const a of lines) s.putAlert(a, alertToJson(a), null);
  s.close();
});

describe('tidewatch alerts', () => {
  it('prints the stored lines as JSON lines, filtered', () => {
    const all = cli(['alerts', '--state', db]);
    expect(all.status).toBe(0);
    expect(all.stdout.split('\n').filter(Boolean).map((l) => JSON.parse(l).id)).toEqual(['tw1-a', 'tw1-b', 'tw1-a']);
    const ids = (...args: string[]) => cli(['alerts', '--state', db, ...args]).stdout.split('\n').filter(Boolean).map((l) => `${JSON.parse(l).id} ${JSON.parse(l).state}`);
    expect(ids('--kind', 'fan-in-flood')).toEqual(['tw1-b open']);
    expect(ids('--host', '192.168.60.23', '--severity', 'medium')).toEqual(['tw1-a closed']);
    expect(ids('--since', '2026-03-10T09:33:00Z', '--until', '2026-03-10T10:00:00Z')).toEqual(['tw1-a closed']);
  });

  it('writes CSV with a header and quoted cells, and one terminal line per alert', () => {
    const csv = cli(['alerts', '--state', db, '--format', 'csv', '--kind', 'fan-in-flood']).stdout.trim().split('\n');
    expect(csv[0]).toBe('id,kind,severity,host,role,start,end,state,feature,observed,expected,score,rule,sensor,suppressed_by');
    expect(csv[1]).toBe('tw1-b,fan-in-flood,high,10.60.0.6,target,2026-03-10T10:05:00.000Z,2026-03-10T10:06:00.000Z,open,max_ports_per_peer,106,2,12.85,vertical-scan/prior,"clinic, north",');
    const pretty = cli(['alerts', '--state', db, '--format', 'pretty']).stdout.trim().split('\n');
    expect(pretty.length).toBe(3);
    expect(pretty[0]).toMatch(/^2026-03-10T09:32:00.000Z LOW +vertical-scan 192\.168\.60\.23 open: /);
  });

  it('refuses bad times and missing files with exit 2', () => {
    expect(cli(['alerts', '--state', db, '--since', 'yesterday']).status).toBe(2);
    expect(cli(['alerts', '--state', join(dir, 'missing.db')]).status).toBe(2);
    expect(cli(['alerts', '--state', db, '--severity', 'urgent']).status).toBe(2);
  });
});
