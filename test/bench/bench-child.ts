/**
 * One measured run in a fresh process, so peak RSS is the run's own: `flows FILE` (capture ingest:
 * reader, decoder, flow table, every record encoded as a JSON line as `tidewatch flows` does, the
 * chunks dropped), `pcap-parser FILE` (the npm pcap-parser's packet loop, counting packets only) or
 * `plain-loop FILE` (plain-loop.ts: the least work that counts bidirectional flows). Prints one JSON line.
 */
import { once } from 'node:events';
import type { EventEmitter } from 'node:events';
import { createRequire } from 'node:module';
import { Writable } from 'node:stream';
import { FlowRecordWriter } from '../../src/flow/record-writer.js';
import type { FlowRecord } from '../../src/flow/record.js';
import { ingestInput } from '../../src/ingest/index.js';
import { ingestOnThread } from '../../src/ingest/threaded.js';
import { DEFAULT_INGEST } from '../../src/ingest/types.js';
import { Sensor } from '../../src/sensor/sensor.js';
import { alertToJson } from '../../src/alert/serialize.js';
import { DEFAULT_INTERNAL } from '../../src/util/addr.js';
import { plainLoop } from './plain-loop.js';

const [mode, file] = process.argv.slice(2);

/** User + system CPU milliseconds since `c`: less sensitive than wall time to other work on the machine. */
function cpuSince(c: NodeJS.CpuUsage): number {
  const u = process.cpuUsage(c);
  return (u.user + u.system) / 1000;
}

async function flows(path: string) {
  // what `tidewatch flows` does per record (src/cli/flows.ts: FlowRecordWriter, JSON lines), with the
  // chunks dropped instead of written
  let chars = 0;
  const out = new Writable({ write(chunk: Buffer, _enc, done) { chars += chunk.length; done(); } });
  const writer = new FlowRecordWriter(out, 'jsonl');
  const sink = (r: FlowRecord) => writer.write(r);
  const t = process.hrtime.bigint(), c = process.cpuUsage();
  const s = await ingestInput(path, sink, DEFAULT_INGEST);
  await writer.drained();
  const ms = Number(process.hrtime.bigint() - t) / 1e6;
  const cpuMs = cpuSince(c);
  return { packets: s.packets, flows: s.flows, distinctFlows: s.counters.distinctFlows, outputChars: chars, problems: s.problemCounts, ms, cpuMs };
}

async function pcapParser(path: string) {
  const pcap = createRequire(import.meta.url)('pcap-parser') as { parse(input: string): EventEmitter };
  let packets = 0;
  const t = process.hrtime.bigint(), c = process.cpuUsage();
  const parser = pcap.parse(path);
  parser.on('packet', () => { packets++; });
  await once(parser, 'end');
  const ms = Number(process.hrtime.bigint() - t) / 1e6;
  return { packets, ms, cpuMs: cpuSince(c) };
}

/**
 * `tidewatch replay` end to end in-process: capture -> flows -> windows -> detectors -> alert lines;
 * `threaded` as replay runs by default (reading thread + main thread), else `--no-read-thread`.
 */
async function replay(path: string, threaded: boolean) {
  let lines = 0, chars = 0;
  const sensor = new Sensor({
    windowMs: 60_000, latenessMs: 5_000, alpha: 0.001, internal: DEFAULT_INTERNAL, sensor: 'bench', mode: 'replay',
  }, (a) => { lines++; chars += alertToJson(a).length; });
  const t = process.hrtime.bigint(), c = process.cpuUsage();
  // as replay runs: the sensor keeps no record, so the reading thread's records share one object
  const s = threaded ? await ingestOnThread(path, sensor.record, DEFAULT_INGEST, { transient: true }) : await ingestInput(path, sensor.record, DEFAULT_INGEST);
  sensor.finish();
  const ms = Number(process.hrtime.bigint() - t) / 1e6;
  return { packets: s.packets, flows: s.flows, alertLines: lines, outputChars: chars, hosts: sensor.aggregator.addresses.size, ms, cpuMs: cpuSince(c) };
}

/**
 * Host scaling: HOSTS distinct outside addresses (100.64.0.0/10 and up, made up) each open a flow to
 * one of 500 inside servers in three passes half an hour apart, so every address lives in three
 * windows and keeps its baselines: the sensor's memory as the host count grows. Units are flow records.
 */
function hosts(count: number) {
  const sensor = new Sensor({
    windowMs: 60_000, latenessMs: 5_000, alpha: 0.001, internal: ['10.0.0.0/8'], sensor: 'bench', mode: 'replay',
  }, () => {});
  const base = Date.UTC(2026, 0, 1);
  const span = 30 * 60_000;
  let records = 0;
  const t = process.hrtime.bigint(), c = process.cpuUsage();
  for (let pass = 0; pass < 3; pass++) {
    for (let i = 0; i < count; i++) {
      const ts = base + pass * span + Math.floor((i / count) * span);
      const src = `${100 + (i >>> 22)}.${64 + ((i >>> 16) & 63)}.${(i >>> 8) & 255}.${i & 255}`;
      sensor.record({
        start: ts, end: ts + 20, proto: 6, src, dst: `10.60.${(i % 500) >> 8}.${i % 250}`, sport: 40_000 + (i % 20_000), dport: 443,
        pkts: 6, bytes: 900, rpkts: 5, rbytes: 4200, flags: 0x1b, rflags: 0x1b, outcome: 'established', exporter: 'bench',
      });
      records++;
    }
  }
  sensor.finish();
  const ms = Number(process.hrtime.bigint() - t) / 1e6;
  return { packets: records, hosts: sensor.aggregator.addresses.size, ms, cpuMs: cpuSince(c) };
}

/** The reading thread's share of replay alone: capture -> flow records, each counted and dropped. */
async function records(path: string) {
  let n = 0;
  const t = process.hrtime.bigint(), c = process.cpuUsage();
  const s = await ingestInput(path, () => { n++; }, DEFAULT_INGEST);
  const ms = Number(process.hrtime.bigint() - t) / 1e6;
  return { packets: s.packets, flows: n, ms, cpuMs: cpuSince(c) };
}

/**
 * The main thread's share of replay alone: the capture's flow records, read beforehand (untimed) and
 * held in memory, through a fresh sensor (windows, detectors, alerts), its code as cold as in replay.
 * Units are the capture's packets, so the rate compares with the other capture rows.
 */
async function windows(path: string) {
  const held: FlowRecord[] = [];
  const s = await ingestInput(path, (r) => { held.push(r); }, DEFAULT_INGEST);
  let lines = 0;
  const sensor = new Sensor({
    windowMs: 60_000, latenessMs: 5_000, alpha: 0.001, internal: DEFAULT_INTERNAL, sensor: 'bench', mode: 'replay',
  }, (a) => { lines++; alertToJson(a); });
  const t = process.hrtime.bigint(), c = process.cpuUsage();
  for (const r of held) sensor.record(r);
  sensor.finish();
  const ms = Number(process.hrtime.bigint() - t) / 1e6;
  return { packets: s.packets, flows: held.length, alertLines: lines, ms, cpuMs: cpuSince(c) };
}

function plain(path: string) {
  const t = process.hrtime.bigint(), c = process.cpuUsage();
  const r = plainLoop(path);
  const ms = Number(process.hrtime.bigint() - t) / 1e6;
  return { packets: r.packets, distinctFlows: r.flows, ms, cpuMs: cpuSince(c) };
}

const result = mode === 'flows' ? await flows(file!)
  : mode === 'plain-loop' ? plain(file!)
  : mode === 'replay' ? await replay(file!, true)
  : mode === 'replay-main' ? await replay(file!, false)
  : mode === 'records' ? await records(file!)
  : mode === 'windows' ? await windows(file!)
  : mode === 'hosts' ? hosts(Number(file))
  : await pcapParser(file!);
process.stdout.write(JSON.stringify({ ...result, maxRssKB: process.resourceUsage().maxRSS }) + '\n');
