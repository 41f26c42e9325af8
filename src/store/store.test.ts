import { mkdtempSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { afterAll, describe, expect, it } from 'vitest';
import type { Alert } from '../alert/alert.js';
import { alertToJson } from '../alert/serialize.js';
import { MIGRATIONS, SCHEMA_VERSION, schemaVersion } from './schema.js';
import { StateError, StateStore } from './store.js';

// The state file: creation mode, journal, forward migration of a v1 file, idempotent alert lines and
// the alerts query. Behaviour is ours (docs/operations.md, State); SQLite facts (user_version, WAL,
// journal_mode's answer) from sqlite.org/pragma.html.
const dir = mkdtempSync(join(tmpdir(), 'tidewatch-store-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function alert(over: Partial<Alert> = {}): Alert {
  return {
    schema: 'tidewatch.alert/1', id: 'tw1-00000000000000aa', kind: 'vertical-scan', severity: 'medium', host: '192.168.60.23',
    role: 'source', start: '2026-03-10T09:31:00.000Z', end: '2026-03-10T09:32:00.000Z', state: 'open', feature: 'max_ports_per_peer',
    observed: 100, expected: 2, low: 0, high: 10, score: 9, evidence: { top_peers: [], top_ports: [], sample_flows: [], flows: 1, packets: 1, bytes: 40 },
    rule: 'vertical-scan/prior', sensor: 't', ...over,
  };
}

describe('StateStore', () => {
  it('creates the file with mode 0600, in WAL mode, at the current schema version', () => {
    const path = join(dir, 'new.db');
    const s = StateStore.open(path);
    expect(statSync(path).mode & 0o777).toBe(0o600);
    expect(s.db.pragma('journal_mode', { simple: true })).toBe('wal');
    s.putState('x', 'y');
    for (const f of [`${path}-wal`, `${path}-shm`]) expect(statSync(f).mode & 0o777).toBe(0o600); // SQLite copies the file's mode
    expect(schemaVersion(s.db)).toBe(SCHEMA_VERSION);
    expect(s.migrated).toEqual(MIGRATIONS.map((m) => m.version));
    s.close();
    const again = StateStore.open(path);
    expect(again.migrated).toEqual([]);
    again.close();
  });

  it('migrates a version 1 file, keeping its rows', () => {
    const path = join(dir, 'v1.db');
    const v1 = new Database(path);
    v1.exec(MIGRATIONS[0]!.sql);
    v1.pragma('user_version = 1');
    v1.prepare(`INSERT INTO alerts (id, kind, host, role, severity, state, start_ms, end_ms, score, json)
      VALUES ('tw1-1', 'vertical-scan', '192.168.60.23', 'source', 'low', 'open', 1, 2, 4, '{}')`).run();
    v1.prepare(`INSERT INTO peers VALUES ('10.60.1.31', '203.0.113.200', 5, 6, 2)`).run();
    v1.close();

    const s = StateStore.open(path);
    expect(s.migrated).toEqual([2]);
    expect(schemaVersion(s.db)).toBe(2);
    expect(s.alerts().map((r) => [r.id, r.suppressed_by])).toEqual([['tw1-1', null]]);
    const indexes = s.db.prepare("SELECT name FROM sqlite_master WHERE type = 'index' AND name LIKE 'alerts_%' ORDER BY name").pluck().all();
    expect(indexes).toEqual(['alerts_host', 'alerts_kind', 'alerts_start']);
    expect(s.db.prepare('SELECT count FROM peers').pluck().get()).toBe(2);
    s.close();
  });

  it('refuses a file from a newer schema and a file that is not SQLite', () => {
    const newer = join(dir, 'newer.db');
    const d = new Database(newer);
    d.pragma(`user_version = ${SCHEMA_VERSION + 1}`);
    d.close();
    expect(() => StateStore.open(newer)).toThrow(StateError);
    const junk = join(dir, 'junk.db');
    writeFileSync(junk, 'not a database, just text that is long enough to be read as a header........');
    expect(() => StateStore.open(junk)).toThrow(/not a usable tidewatch state file/);
  });

  it('stores each feed line once, keyed by id, state and end', () => {
    const s = StateStore.open(join(dir, 'lines.db'));
    const open = alert();
    expect(s.putAlert(open, alertToJson(open), null)).toBe(true);
    expect(s.putAlert(open, alertToJson(open), null)).toBe(false); // a rerun
    const closed = alert({ state: 'closed', end: '2026-03-10T09:35:00.000Z' });
    expect(s.putAlert(closed, alertToJson(closed), null)).toBe(true);
    expect(s.alerts().map((r) => r.state)).toEqual(['open', 'closed']);
    s.close();
  });

  it('filters by time overlap, kind, host, minimum severity and suppression', () => {
    const s = StateStore.open(join(dir, 'query.db'));
    const lines = [
      alert({ id: 'a', severity: 'low' }),
      alert({ id: 'b', kind: 'fan-in-flood', host: '10.60.0.6', role: 'target', severity: 'high', start: '2026-03-10T10:05:00.000Z', end: '2026-03-10T10:06:00.000Z' }),
      alert({ id: 'c', severity: 'critical', start: '2026-03-10T11:00:00.000Z', end: '2026-03-10T11:01:00.000Z' }),
    ];
    for (const a of lines) s.putAlert(a, alertToJson(a), null);
    const label = s.addLabel({ alertId: 'a', verdict: 'benign', scope: 'episode', kind: 'vertical-scan', host: '192.168.60.23', role: 'source', peer: '', episodeStart: 0, note: '', created: 'now' });
    const hidden = alert({ id: 'd', start: '2026-03-10T12:00:00.000Z', end: '2026-03-10T12:01:00.000Z' });
    s.putAlert(hidden, alertToJson(hidden), label.id);
    const ids = (q: Parameters<StateStore['alerts']>[0]) => s.alerts(q).map((r) => r.id);
    expect(ids({})).toEqual(['a', 'b', 'c']);
    expect(ids({ showSuppressed: true })).toEqual(['a', 'b', 'c', 'd']);
    expect(ids({ sinceMs: Date.parse('2026-03-10T10:05:30Z') })).toEqual(['b', 'c']); // b's span ends after
    expect(ids({ untilMs: Date.parse('2026-03-10T10:05:00Z') })).toEqual(['a']); // b starts exactly there
    expect(ids({ kind: 'vertical-scan' })).toEqual(['a', 'c']);
    expect(ids({ host: '10.60.0.6' })).toEqual(['b']);
    expect(ids({ minSeverity: 'high' })).toEqual(['b', 'c']);
    expect(s.lastLine('a')?.id).toBe('a');
    expect(s.labels()).toEqual([label]);
    s.close();
  });

  it('keeps peer counts per window, not per rerun of a window', () => {
    const s = StateStore.open(join(dir, 'peers.db'));
    s.touchPeer('10.60.1.31', '203.0.113.200', 60_000);
    s.touchPeer('10.60.1.31', '203.0.113.200', 120_000);
    s.touchPeer('10.60.1.31', '203.0.113.200', 120_000); // the same window again (rerun after a crash)
    expect(s.db.prepare('SELECT first_seen, last_seen, count FROM peers').get()).toEqual({ first_seen: 60_000, last_seen: 120_000, count: 2 });
    s.close();
  });
});
