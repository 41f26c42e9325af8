import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import type { FlowRecord } from '../../src/flow/record.js';
import { ingestInput } from '../../src/ingest/index.js';
import { DEFAULT_INGEST } from '../../src/ingest/types.js';
import type { Alert } from '../../src/alert/alert.js';
import { replayFiles } from './run-sensor.js';

const dir = mkdtempSync(join(tmpdir(), 'tidewatch-oneway-export-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const DEMO = 'captures/larkspur-demo.pcap';
const INSIDE = ['10.60.0.0/22', '192.168.60.0/24', '2001:db8:60::/48'];

/** One flow as a one-way exporter reports it: a record each way, no reverse counters, no outcome. */
function oneWay(r: FlowRecord): object[] {
  const fwd = { start: r.start, end: r.end, proto: r.proto, src: r.src, dst: r.dst, sport: r.sport, dport: r.dport, pkts: r.pkts, bytes: r.bytes, flags: r.flags };
  if (r.rpkts === 0) return [fwd];
  // the answer's first packet comes a moment after the flow's first
  return [fwd, { start: r.start + 1, end: r.end, proto: r.proto, src: r.dst, dst: r.src, sport: r.dport, dport: r.sport, pkts: r.rpkts, bytes: r.rbytes, flags: r.rflags }];
}

const openings = (alerts: Alert[]) => alerts.filter((a) => a.state === 'open').map((a) => `${a.kind} ${a.host} ${a.start}`).sort();

describe('one-way flow exports (each direction its own record, as NetFlow v5 and most v9 exporters send; common practice, no source)', () => {
  it('the demo traffic exported one way raises the same episodes as exported as biflows', async () => {
    const flows: FlowRecord[] = [];
    await ingestInput(DEMO, (r) => flows.push({ ...r }), DEFAULT_INGEST);
    const bi = join(dir, 'biflow.jsonl'), uni = join(dir, 'one-way.jsonl');
    writeFileSync(bi, flows.map((r) => JSON.stringify(r)).join('\n') + '\n');
    writeFileSync(uni, flows.flatMap(oneWay).map((r) => JSON.stringify(r)).join('\n') + '\n');
    const a = await replayFiles([bi], INSIDE), b = await replayFiles([uni], INSIDE);
    expect(openings(a.alerts).length).toBeGreaterThanOrEqual(8);
    expect(openings(b.alerts)).toEqual(openings(a.alerts));
  }, 60_000);
});
