import type { Database } from 'better-sqlite3';

/**
 * The state file's schema, as forward migrations: migration N takes a file from version N-1 to N
 * (`PRAGMA user_version`, 0 for a new file). A file newer than SCHEMA_VERSION is refused, older ones
 * are migrated in one transaction when opened for writing.
 */
export interface Migration {
  version: number;
  what: string;
  sql: string;
}

export const MIGRATIONS: readonly Migration[] = [
  {
    version: 1,
    what: 'hosts, baselines, peers, alerts, labels, run state',
    sql: `
      CREATE TABLE hosts (
        address    TEXT PRIMARY KEY,
        inside     INTEGER NOT NULL,
        first_seen INTEGER NOT NULL,           -- window start, epoch ms
        last_seen  INTEGER NOT NULL,
        model      BLOB                        -- detector state (store/codec.ts), written at checkpoints
      ) WITHOUT ROWID;
      CREATE TABLE baselines (
        address TEXT NOT NULL,
        bank    TEXT NOT NULL,                 -- counts | plain (detect/model.ts Baselines)
        slots   BLOB NOT NULL,                 -- BaselineBank.slotToBytes of each feature, length-prefixed
        PRIMARY KEY (address, bank)
      ) WITHOUT ROWID;
      CREATE TABLE peers (
        host       TEXT NOT NULL,
        peer       TEXT NOT NULL,
        first_seen INTEGER NOT NULL,
        last_seen  INTEGER NOT NULL,
        count      INTEGER NOT NULL,           -- windows in which host initiated traffic to peer
        PRIMARY KEY (host, peer)
      ) WITHOUT ROWID;
      CREATE TABLE alerts (
        seq      INTEGER PRIMARY KEY AUTOINCREMENT,
        id       TEXT NOT NULL,
        kind     TEXT NOT NULL,
        host     TEXT NOT NULL,
        role     TEXT NOT NULL,
        severity TEXT NOT NULL,
        state    TEXT NOT NULL,
        start_ms INTEGER NOT NULL,
        end_ms   INTEGER NOT NULL,
        score    REAL NOT NULL,
        json     TEXT NOT NULL,                -- the feed line
        UNIQUE (id, state, end_ms)
      );
      CREATE TABLE labels (
        id            INTEGER PRIMARY KEY AUTOINCREMENT,
        alert_id      TEXT NOT NULL,
        verdict       TEXT NOT NULL CHECK (verdict IN ('benign', 'malicious')),
        scope         TEXT NOT NULL CHECK (scope IN ('episode', 'host', 'host-peer', 'host-kind')),
        kind          TEXT NOT NULL,
        host          TEXT NOT NULL,
        role          TEXT NOT NULL,
        peer          TEXT NOT NULL,
        episode_start INTEGER NOT NULL,
        note          TEXT NOT NULL,
        created       TEXT NOT NULL
      );
      CREATE TABLE run_state (
        key   TEXT PRIMARY KEY,
        value BLOB NOT NULL
      ) WITHOUT ROWID;
    `,
  },
  {
    version: 2,
    what: 'alert suppression by benign labels; alert indexes for the alerts command',
    sql: `
      ALTER TABLE alerts ADD COLUMN suppressed_by INTEGER REFERENCES labels(id);
      CREATE INDEX alerts_start ON alerts (start_ms);
      CREATE INDEX alerts_host ON alerts (host, start_ms);
      CREATE INDEX alerts_kind ON alerts (kind, start_ms);
    `,
  },
];

export const SCHEMA_VERSION = MIGRATIONS[MIGRATIONS.length - 1]!.version;

/** The file's schema version (0 = empty file). */
export function schemaVersion(db: Database): number {
  return db.pragma('user_version', { simple: true }) as number;
}

/** Applies every migration after the file's version, all in one transaction. Returns the versions applied. */
export function migrate(db: Database): number[] {
  const from = schemaVersion(db);
  if (from > SCHEMA_VERSION) throw new Error(`schema version ${from} is newer than this tidewatch knows (${SCHEMA_VERSION})`);
  const todo = MIGRATIONS.filter((m) => m.version > from);
  if (todo.length === 0) return [];
  db.transaction(() => {
    for (const m of todo) {
      db.exec(m.sql);
      db.pragma(`user_version = ${m.version}`); // an integer from our own table, not input
    }
  })();
  return todo.map((m) => m.version);
}
