import { closeSync, fchmodSync, openSync } from 'node:fs';
import Database from 'better-sqlite3';
import type { Alert, Severity } from '../alert/alert.js';
import { SEVERITIES } from '../alert/severity.js';
import { migrate, schemaVersion, SCHEMA_VERSION } from './schema.js';

export type Verdict = 'benign' | 'malicious';
export const LABEL_SCOPES = ['episode', 'host', 'host-peer', 'host-kind'] as const;
export type LabelScope = (typeof LABEL_SCOPES)[number];

/** An analyst's verdict on one alert (episode), with what its scope matches on. */
export interface Label {
  id: number;
  alertId: string;
  verdict: Verdict;
  scope: LabelScope;
  kind: string;
  host: string;
  role: string;
  /** The episode's main peer (evidence `peer`, else its top peer; '' when none): host-peer scope. */
  peer: string;
  /** Start of the labelled episode, epoch ms: the label applies to episodes starting after it. */
  episodeStart: number;
  note: string;
  created: string;
}

export interface StoredAlert {
  seq: number;
  id: string;
  kind: string;
  host: string;
  role: string;
  severity: Severity;
  state: string;
  start_ms: number;
  end_ms: number;
  score: number;
  json: string;
  suppressed_by: number | null;
}

export interface AlertQuery {
  /** Alerts whose span ends at or after this (epoch ms). */
  sinceMs?: number;
  /** Alerts whose span starts before this (epoch ms). */
  untilMs?: number;
  kind?: string;
  host?: string;
  /** This severity or higher. */
  minSeverity?: Severity;
  /** Include lines suppressed by a benign label. */
  showSuppressed?: boolean;
}

export class StateError extends Error {}

interface LabelRow {
  id: number; alert_id: string; verdict: Verdict; scope: LabelScope; kind: string; host: string; role: string;
  peer: string; episode_start: number; note: string; created: string;
}

/**
 * The state file (SQLite through better-sqlite3, WAL journal): learned state, the alert feed as stored
 * lines, and labels. Every statement is prepared once here and takes bound parameters only.
 */
export class StateStore {
  readonly db: Database.Database;
  /** Migrations applied when this file was opened (empty when it was current). */
  readonly migrated: number[];
  private readonly st;

  private constructor(db: Database.Database, migrated: number[]) {
    this.db = db;
    this.migrated = migrated;
    this.st = {
      alert: db.prepare(`INSERT OR IGNORE INTO alerts (id, kind, host, role, severity, state, start_ms, end_ms, score, json, suppressed_by)
        VALUES (@id, @kind, @host, @role, @severity, @state, @start_ms, @end_ms, @score, @json, @suppressed_by)`),
      host: db.prepare(`INSERT INTO hosts (address, inside, first_seen, last_seen) VALUES (?, ?, ?, ?)
        ON CONFLICT (address) DO UPDATE SET first_seen = min(first_seen, excluded.first_seen), last_seen = max(last_seen, excluded.last_seen)`),
      // a window already counted (a rerun after a crash) does not count again: windows come in time order
      peer: db.prepare(`INSERT INTO peers (host, peer, first_seen, last_seen, count) VALUES (?, ?, ?, ?, 1)
        ON CONFLICT (host, peer) DO UPDATE SET count = count + (excluded.last_seen > last_seen),
          first_seen = min(first_seen, excluded.first_seen), last_seen = max(last_seen, excluded.last_seen)`),
      clearModels: db.prepare('UPDATE hosts SET model = NULL WHERE model IS NOT NULL'),
      model: db.prepare(`INSERT INTO hosts (address, inside, first_seen, last_seen, model) VALUES (?, ?, ?, ?, ?)
        ON CONFLICT (address) DO UPDATE SET model = excluded.model`),
      models: db.prepare('SELECT address, model FROM hosts WHERE model IS NOT NULL'),
      clearBaselines: db.prepare('DELETE FROM baselines'),
      baseline: db.prepare('INSERT INTO baselines (address, bank, slots) VALUES (?, ?, ?)'),
      baselines: db.prepare('SELECT address, bank, slots FROM baselines'),
      dropModel: db.prepare('UPDATE hosts SET model = NULL WHERE address = ?'),
      putBaseline: db.prepare(`INSERT INTO baselines (address, bank, slots) VALUES (?, ?, ?)
        ON CONFLICT (address, bank) DO UPDATE SET slots = excluded.slots`),
      dropBaseline: db.prepare('DELETE FROM baselines WHERE address = ? AND bank = ?'),
      getState: db.prepare('SELECT value FROM run_state WHERE key = ?').pluck(),
      putState: db.prepare('INSERT INTO run_state (key, value) VALUES (?, ?) ON CONFLICT (key) DO UPDATE SET value = excluded.value'),
      query: db.prepare(`SELECT * FROM alerts
        WHERE (@since IS NULL OR end_ms >= @since) AND (@until IS NULL OR start_ms < @until)
          AND (@kind IS NULL OR kind = @kind) AND (@host IS NULL OR host = @host)
          AND (@sev IS NULL OR (CASE severity WHEN 'low' THEN 0 WHEN 'medium' THEN 1 WHEN 'high' THEN 2 ELSE 3 END) >= @sev)
          AND (@all = 1 OR suppressed_by IS NULL)
        ORDER BY seq`),
      lastLine: db.prepare('SELECT * FROM alerts WHERE id = ? ORDER BY seq DESC LIMIT 1'),
      addLabel: db.prepare(`INSERT INTO labels (alert_id, verdict, scope, kind, host, role, peer, episode_start, note, created)
        VALUES (@alertId, @verdict, @scope, @kind, @host, @role, @peer, @episodeStart, @note, @created)`),
      labels: db.prepare('SELECT * FROM labels ORDER BY id'),
    };
  }

  /**
   * Opens (creating it with mode 0600) and migrates a state file. `readonly` opens an existing file
   * without migrating it, for readers of a file another process writes.
   */
  static open(path: string, opts: { readonly?: boolean } = {}): StateStore {
    if (!opts.readonly) createPrivate(path);
    let db: Database.Database;
    try {
      db = new Database(path, { readonly: opts.readonly === true, fileMustExist: opts.readonly === true });
    } catch (e) {
      throw new StateError(`${path}: cannot open (${(e as Error).message})`);
    }
    try {
      db.pragma('busy_timeout = 5000');
      if (!opts.readonly) {
        db.pragma('journal_mode = WAL');
        // WAL with NORMAL sync: a killed process loses nothing committed; a power cut may lose the last windows
        db.pragma('synchronous = NORMAL');
        db.pragma('foreign_keys = ON');
      }
      const migrated = opts.readonly ? [] : migrate(db);
      if (schemaVersion(db) !== SCHEMA_VERSION) throw new Error(`schema version ${schemaVersion(db)}, expected ${SCHEMA_VERSION}`);
      return new StateStore(db, migrated);
    } catch (e) {
      db.close();
      throw new StateError(`${path}: not a usable tidewatch state file (${(e as Error).message})`);
    }
  }

  transaction<T>(fn: () => T): T {
    return this.db.transaction(fn)();
  }

  /** Stores one feed line; false when this (id, state, end) line is already there (a rerun). */
  putAlert(a: Alert, json: string, suppressedBy: number | null): boolean {
    return this.st.alert.run({
      id: a.id, kind: a.kind, host: a.host, role: a.role, severity: a.severity, state: a.state,
      start_ms: Date.parse(a.start), end_ms: Date.parse(a.end), score: a.score, json, suppressed_by: suppressedBy,
    }).changes === 1;
  }

  touchHost(address: string, inside: boolean, windowStart: number): void {
    this.st.host.run(address, inside ? 1 : 0, windowStart, windowStart);
  }

  touchPeer(host: string, peer: string, windowStart: number): void {
    this.st.peer.run(host, peer, windowStart, windowStart);
  }

  /** Replaces every host model (one call per checkpoint, inside its transaction). */
  putModels(models: Iterable<{ address: string; inside: boolean; lastSeen: number; model: Buffer }>): void {
    this.st.clearModels.run();
    for (const m of models) this.st.model.run(m.address, m.inside ? 1 : 0, m.lastSeen, m.lastSeen, m.model);
  }

  models(): { address: string; model: Buffer }[] {
    return this.st.models.all() as { address: string; model: Buffer }[];
  }

  /** Replaces every baseline row (one call per checkpoint, inside its transaction). */
  putBaselines(rows: Iterable<{ address: string; bank: string; slots: Buffer }>): void {
    this.st.clearBaselines.run();
    for (const r of rows) this.st.baseline.run(r.address, r.bank, r.slots);
  }

  /** One host's model (null: it has none any more), for a checkpoint of the hosts changed since the last. */
  putModel(address: string, inside: boolean, lastSeen: number, model: Buffer | null): void {
    if (model) this.st.model.run(address, inside ? 1 : 0, lastSeen, lastSeen, model);
    else this.st.dropModel.run(address);
  }

  /** One host's baseline row of a bank (null: none to keep). */
  putBaseline(address: string, bank: string, slots: Buffer | null): void {
    if (slots) this.st.putBaseline.run(address, bank, slots);
    else this.st.dropBaseline.run(address, bank);
  }

  baselines(): { address: string; bank: string; slots: Buffer }[] {
    return this.st.baselines.all() as { address: string; bank: string; slots: Buffer }[];
  }

  getState(key: string): Buffer | undefined {
    const v = this.st.getState.get(key) as Buffer | string | undefined;
    return v === undefined ? undefined : Buffer.isBuffer(v) ? v : Buffer.from(v);
  }

  putState(key: string, value: Buffer | string): void {
    this.st.putState.run(key, typeof value === 'string' ? Buffer.from(value) : value);
  }

  alerts(q: AlertQuery = {}): StoredAlert[] {
    return this.st.query.all({
      since: q.sinceMs ?? null, until: q.untilMs ?? null, kind: q.kind ?? null, host: q.host ?? null,
      sev: q.minSeverity ? SEVERITIES.indexOf(q.minSeverity) : null, all: q.showSuppressed ? 1 : 0,
    }) as StoredAlert[];
  }

  /** The latest stored line of an alert id. */
  lastLine(id: string): StoredAlert | undefined {
    return this.st.lastLine.get(id) as StoredAlert | undefined;
  }

  addLabel(l: Omit<Label, 'id'>): Label {
    const r = this.st.addLabel.run(l);
    return { ...l, id: Number(r.lastInsertRowid) };
  }

  labels(): Label[] {
    return (this.st.labels.all() as LabelRow[]).map((r) => ({
      id: r.id, alertId: r.alert_id, verdict: r.verdict, scope: r.scope, kind: r.kind, host: r.host, role: r.role,
      peer: r.peer, episodeStart: r.episode_start, note: r.note, created: r.created,
    }));
  }

  close(): void {
    this.db.close();
  }
}

/** Creates the file with mode 0600 when it does not exist (SQLite gives its -wal and -shm files the same mode). */
function createPrivate(path: string): void {
  let fd: number;
  try {
    fd = openSync(path, 'wx', 0o600);
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code === 'EEXIST') return;
    throw new StateError(`${path}: cannot create (${(e as NodeJS.ErrnoException).code ?? 'error'})`);
  }
  try {
    fchmodSync(fd, 0o600); // whatever the umask
  } finally {
    closeSync(fd);
  }
}
