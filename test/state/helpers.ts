import { spawnSync } from 'node:child_process';
import { readFileSync, writeFileSync } from 'node:fs';
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

export const CLI = new URL('../../dist/src/cli/main.js', import.meta.url).pathname;

/** Runs the built CLI (`npm test` builds first). */
export function cli(args: string[], input?: string): { status: number | null; stdout: string; stderr: string } {
  const r = spawnSync(process.execPath, [CLI, ...args], { encoding: 'utf8', input, maxBuffer: 64 * 1024 * 1024 });
  return { status: r.status, stdout: r.stdout, stderr: r.stderr };
}

/**
 * Splits a classic little-endian microsecond pcap (the generator's) at a time: packets before `ms` go
 * to `a`, the rest to `b`, each with the file header. Record layout: draft-ietf-opsawg-pcap section 5
 * (16-octet record header: seconds, microseconds, captured length, original length).
 */
export function splitPcap(file: string, ms: number, a: string, b: string): void {
  const buf = readFileSync(file);
  let o = 24;
  while (o + 16 <= buf.length) {
    const t = buf.readUInt32LE(o) * 1000 + buf.readUInt32LE(o + 4) / 1000;
    if (t >= ms) break;
    o += 16 + buf.readUInt32LE(o + 8);
  }
  writeFileSync(a, buf.subarray(0, o));
  writeFileSync(b, Buffer.concat([buf.subarray(0, 24), buf.subarray(o)]));
}

/** id, state, end and score of each JSON line: what two feeds must agree on. */
export function lineKeys(jsonl: string): string[] {
  return jsonl.split('\n').filter(Boolean).map((l) => {
    const a = JSON.parse(l) as Alert;
    return `${a.id} ${a.state} ${a.end} ${a.score}`;
  });
}
