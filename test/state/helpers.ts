import Database from 'better-sqlite3';
import { ingestInput } from '../../src/ingest/index.js';
import { DEFAULT_INGEST } from '../../src/ingest/types.js';
import type { FlowRecord } from '../../src/flow/record.js';
import { Sensor, type SensorOptions } from '../../src/sensor/sensor.js';
import type { Alert } from '../../src/alert/alert.js';
import { SensorState } from '../../src/store/session.js';

export const LARKSPUR_INSIDE = ['10.60.0.0/24', '10.60.1.0/24', '10.60.2.0/24', '10.60.3.0/24', '192.168.60.0/24', '2001:db8:60::/48'];

/** Every flow record of a file, in ingest order. */
export async function readRecords(file: string): Promise<FlowRecord[]> {
  const out: FlowRecord[] = [];
  await ingestInput(file, (r) => { out.push(r); }, { ...DEFAULT_INGEST });
  return out;
}

export function sensorOptions(extra: Partial<SensorOptions> = {}): SensorOptions {
  return { windowMs: 60_000, latenessMs: 5_000, alpha: 0.001, internal: LARKSPUR_INSIDE, sensor: 'test', mode: 'replay', ...extra };
}

/**
 * One run with `--state` as the CLI does it, in-process: restore, feed the records, suspend and
 * checkpoint. Returns the lines that reached the output.
 */
export function runWithState(db: string, records: Iterable<FlowRecord>, extra: Partial<SensorOptions> = {}, showSuppressed = false): Alert[] {
  const shown: Alert[] = [];
  const state = SensorState.open(db, { showSuppressed });
  const sensor = new Sensor(sensorOptions(extra), state.emitter((a) => shown.push(a)));
  state.attach(sensor);
  for (const r of records) sensor.record(r);
  state.suspend();
  state.close();
  return shown;
}

/** The stored feed lines, in order. */
export function storedLines(db: string): { json: string; suppressed_by: number | null }[] {
  const d = new Database(db, { readonly: true });
  try {
    return d.prepare('SELECT json, suppressed_by FROM alerts ORDER BY seq').all() as { json: string; suppressed_by: number | null }[];
  } finally {
    d.close();
  }
}

/** Every learned-state row except the checkpoint's wall-clock time, for comparing two state files. */
export function learnedState(db: string): Record<string, unknown> {
  const d = new Database(db, { readonly: true });
  try {
    return {
      hosts: d.prepare('SELECT address, inside, first_seen, last_seen, hex(model) AS model FROM hosts ORDER BY address').all(),
      baselines: d.prepare('SELECT address, bank, hex(slots) AS slots FROM baselines ORDER BY address, bank').all(),
      peers: d.prepare('SELECT * FROM peers ORDER BY host, peer').all(),
      run: d.prepare("SELECT key, hex(value) AS value FROM run_state WHERE key <> 'meta' ORDER BY key").all(),
    };
  } finally {
    d.close();
  }
}
