/**
 * One test per cap (src/util/caps.ts): each drives a component past its cap and checks that it holds
 * (memory stays bounded, the run goes on) and that the counter the summaries print reports it.
 * The caps are ours (common practice, no source) except where a format fixes the bound.
 */
import { createSocket } from 'node:dgram';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import type { Finding } from '../../src/detect/finding.js';
import { EvidenceAccumulator, MAX_TALLY } from '../../src/alert/evidence.js';
import { EpisodeTracker } from '../../src/alert/episodes.js';
import { buildPcap, frame } from '../../src/capture/testing.js';
import { collectorCapCounts, inputCapCounts, sensorCapCounts, syslogCapCounts } from '../../src/cli/cap-counts.js';
import { startCollector } from '../../src/flowlog/collector.js';
import { IpfixDecoder } from '../../src/flowlog/ipfix.js';
import { LIMITS, TemplateBudget } from '../../src/flowlog/session.js';
import { ingestCsv, MAX_LINE_BYTES } from '../../src/flowlog/textlog.js';
import { concat, ipfixMessage, ipfixSet, memorySource, runIngest, templateRecord, Wire } from '../../src/flowlog/testing.js';
import { ingestCapture } from '../../src/flow/ingest.js';
import { DEFAULT_INGEST } from '../../src/ingest/types.js';
import { loadRules } from '../../src/rules/load.js';
import { MAX_RULE_FILE_BYTES } from '../../src/rules/source.js';
import { Sensor } from '../../src/sensor/sensor.js';
import { UdpSyslogSink } from '../../src/sink/syslog.js';
import { CAPS, formatCapCounts } from '../../src/util/caps.js';
import { WindowAggregator } from '../../src/window/aggregator.js';
import { PAIR_SET_CAP } from '../../src/window/host-acc.js';
import { CidrSet } from '../../src/util/addr.js';
import { DEMO, DEMO_INSIDE, addr10, alertFixture, cli, rec } from './helpers.js';

const W = 60_000;
const T0 = Date.UTC(2026, 2, 10, 9, 0, 0);

function sensor(): Sensor {
  return new Sensor({ windowMs: W, latenessMs: 0, alpha: 0.001, internal: ['10.0.0.0/8'], sensor: 't', mode: 'replay' }, () => {});
}

/** A flow template: src/dst IPv4, ports, protocol, octets, packets, start/end seconds (RFC 7012 ids). */
const FLOW_FIELDS = [[8, 4], [12, 4], [7, 2], [11, 2], [4, 1], [1, 4], [2, 4], [150, 4], [151, 4]] as const;

describe('caps hold and are counted', () => {
  it('every cap in the list has a default or says it has none, an option and a module', () => {
    for (const c of CAPS) {
      expect(c.option.length).toBeGreaterThan(0);
      expect(c.where).toMatch(/^src\//);
      expect(c.default === null || c.default > 0).toBe(true);
    }
    expect(formatCapCounts({})).toBe('caps: none reached');
    expect(formatCapCounts({ 'hosts-over-cap': 2, 'flows-evicted': 0 })).toBe('caps reached: hosts-over-cap=2');
  });

  it('flows: a capture through a 2-flow table evicts, and the count reaches the summary', async () => {
    const pkts = Array.from({ length: 20 }, (_, i) => {
      const f = frame(54, i);
      f.set([0x08, 0x00], 12); // Ethernet II, IPv4 (IEEE 802.3)
      f.set([0x45, 0, 0, 40, 0, 0, 0, 0, 64, 17, 0, 0, 192, 0, 2, 1, 198, 51, 100, i + 1], 14);
      f.set([0x9c, 0x40, 0, 53, 0, 20, 0, 0], 34);
      return { sec: 1_700_000_000, sub: i, data: f };
    });
    const file = buildPcap({ le: true }, pkts);
    const s = await ingestCapture(memorySource(file), () => {}, { ...DEFAULT_INGEST, maxFlows: 2 });
    expect(s.flows).toBeGreaterThanOrEqual(20);
    expect(inputCapCounts([s])['flows-evicted']).toBeGreaterThan(0);
  });

  it('hosts: past --max-hosts new addresses are not tracked; known hosts still are; records dropped are counted', () => {
    const s = sensor();
    s.aggregator.maxHosts = 10;
    for (let i = 0; i < 100; i++) s.record(rec({ src: addr10(1 + (i % 3)), dst: addr10(100 + i), start: T0 + i * 100, end: T0 + i * 100 }));
    s.finish();
    expect(s.aggregator.addresses.size).toBeLessThanOrEqual(10);
    expect(s.aggregator.stats.hostsOverCap).toBe(100 - 7);
    expect(sensorCapCounts(s)['hosts-over-cap']).toBe(93);
  });

  it('peer history: past the per-generation pair cap the older generation is forgotten and counted', () => {
    const agg = new WindowAggregator({ windowMs: W, latenessMs: 0, internal: new CidrSet(['10.0.0.0/8']), maxHistoryPairs: 1024 }, () => {});
    for (let i = 0; i < 5000; i++) agg.add(rec({ src: addr10(1), dst: addr10(10 + i), start: T0, end: T0 }));
    expect(agg.history.size).toBeLessThanOrEqual(2 * 1024);
    expect(agg.history.forgotten).toBeGreaterThan(0);
    expect(sensorCapCounts({ aggregator: agg, tracker: new EpisodeTracker({ windowMs: W, sensor: 't', mode: 'replay' }, () => {}) })['peer-pairs-forgotten'])
      .toBe(agg.history.forgotten);
  });

  it('sketch memory: a host with more (peer, port) pairs than the exact set holds is counted once per window', () => {
    const s = sensor();
    for (let i = 0; i < PAIR_SET_CAP + 500; i++) {
      s.record(rec({ src: addr10(1), dst: addr10(1000 + (i >> 4)), dport: 1 + (i & 15), start: T0 + 10, end: T0 + 10 }));
    }
    s.finish();
    expect(s.aggregator.stats.sketchCapped).toBe(1);
    expect(sensorCapCounts(s)['sketch-capped-host-windows']).toBe(1);
  });

  it('templates per exporter: ids past the per-exporter cap are refused and counted', () => {
    const dec = new IpfixDecoder('f', 'f', () => {});
    const n = LIMITS.templatesPerExporter + 50;
    for (let id = 256; id < 256 + n; id += 400) {
      const recs = [];
      for (let k = id; k < Math.min(id + 400, 256 + n); k++) recs.push(templateRecord(k, [[8, 4]]));
      dec.decodeMessage(ipfixMessage(1, 0, 1_700_000_000, ipfixSet(2, concat(...recs))), 0, Infinity, 0);
    }
    expect(dec.counters.templatesOverCap).toBe(50);
    expect(dec.counters.problems.toObject()['template-cap']).toBe(50);
  });

  it('templates in total: a shared budget refuses templates of a second exporter', () => {
    const budget = new TemplateBudget(3);
    const a = new IpfixDecoder('a', 'a', () => {}, budget), b = new IpfixDecoder('b', 'b', () => {}, budget);
    const msg = ipfixMessage(1, 0, 1_700_000_000, ipfixSet(2, concat(templateRecord(256, [[8, 4]]), templateRecord(257, [[8, 4]]))));
    a.decodeMessage(msg, 0, msg.length, 0);
    b.decodeMessage(msg, 0, msg.length, 0);
    expect(budget.used).toBe(3);
    expect(b.counters.templatesOverCap).toBe(1);
  });

  it('pending data sets: sets past the wait buffer are dropped and counted, in the ingest summary too', async () => {
    const data = ipfixSet(300, new Uint8Array(8));
    const msgs = Array.from({ length: LIMITS.pendingSets + 10 }, (_, i) => ipfixMessage(1, i, 1_700_000_000, data));
    const { summary } = await runIngest((await import('../../src/flowlog/file-ingest.js')).ingestIpfix, concat(...msgs));
    expect(summary.counters['pendingOverCap']).toBe(10);
    expect(inputCapCounts([summary])['pending-sets-dropped']).toBe(10);
  });

  it('observation domains: past the per-exporter cap further domains are skipped and counted', () => {
    const dec = new IpfixDecoder('f', 'f', () => {});
    for (let d = 0; d < LIMITS.domainsPerExporter + 5; d++) {
      const m = ipfixMessage(d, 0, 1_700_000_000);
      dec.decodeMessage(m, 0, m.length, 0);
    }
    expect(dec.counters.problems.toObject()['domain-cap']).toBe(5);
  });

  it('UDP datagram size and exporters: over-size datagrams and exporters past the cap are refused and counted', async () => {
    const got: string[] = [];
    const c = await startCollector({ ipfixUdp: '127.0.0.1:0' }, (r) => got.push(r.src), undefined, { maxDatagramBytes: 200, maxExporters: 1 });
    const port = c.addresses().ipfixUdp!.port;
    const tpl = ipfixSet(2, templateRecord(256, FLOW_FIELDS));
    const rec1 = new Wire().ip4('192.0.2.1').ip4('198.51.100.1').u16(1).u16(2).u8(6).u32(1).u32(1).u32(1_700_000_000).u32(1_700_000_001).bytes();
    const good = ipfixMessage(1, 0, 1_700_000_000, tpl, ipfixSet(256, rec1));
    const big = ipfixMessage(1, 1, 1_700_000_000, ipfixSet(256, new Uint8Array(400)));
    const a = createSocket('udp4'), b = createSocket('udp4');
    const send = (s: typeof a, m: Uint8Array) => new Promise<void>((r) => s.send(m, port, '127.0.0.1', () => r()));
    await send(a, good);
    await send(a, big);
    await new Promise((r) => setTimeout(r, 100));
    await send(b, good); // a second exporter: over the cap of 1
    await new Promise((r) => setTimeout(r, 200));
    a.close(); b.close();
    await c.close();
    const st = c.stats();
    expect(got).toEqual(['192.0.2.1']);
    expect(st.datagramsOverCap).toBe(1);
    expect(st.exportersOverCap).toBe(1);
    expect(collectorCapCounts(st)).toMatchObject({ 'datagrams-over-cap': 1, 'exporters-over-cap': 1 });
  });

  it('CSV line length: a line past the cap is skipped and counted; the next line is still read', async () => {
    const head = 'src,dst,proto,start\n';
    const long = `192.0.2.1,198.51.100.1,tcp,"${'x'.repeat(MAX_LINE_BYTES + 10)}"\n`;
    const text = new TextEncoder().encode(`${head}${long}192.0.2.2,198.51.100.2,tcp,1700000000\n`);
    const flows: string[] = [];
    const s = await ingestCsv(memorySource(text, 65_536), (r) => flows.push(r.src), DEFAULT_INGEST);
    expect(flows).toEqual(['192.0.2.2']);
    expect(inputCapCounts([s])['lines-too-long']).toBe(1);
  });

  it('captured length: a record longer than the cap stops the capture there, counted', async () => {
    const file = buildPcap({ le: true, snaplen: 0 }, [{ sec: 1, sub: 0, data: frame(60) }, { sec: 2, sub: 0, data: frame(10), capLen: 300 * 1024 }]);
    const s = await ingestCapture(memorySource(file), () => {}, DEFAULT_INGEST);
    expect(s.packets).toBe(1);
    expect(inputCapCounts([s])['records-too-long']).toBe(1);
  });

  it('rule file size: a file past the cap is refused with its size, before it is parsed', () => {
    const dir = mkdtempSync(join(tmpdir(), 'tw-caps-'));
    const f = join(dir, 'big.yaml');
    writeFileSync(f, `# ${'x'.repeat(MAX_RULE_FILE_BYTES)}\n`);
    const r = loadRules(f);
    expect('errors' in r && r.errors[0]).toMatch(/big\.yaml:1:1: file too large \(\d+ bytes, at most 1048576\)/);
  });

  it('evidence lists: tallies past the cap are pruned and the prunes counted by the tracker', () => {
    const e = new EvidenceAccumulator();
    const peers = Array.from({ length: MAX_TALLY + 1 }, (_, i) => ({ peer: addr10(i), count: 1 }));
    const base = { top_ports: [], sample_flows: [], flows: 1, packets: 1, bytes: 1 };
    expect(e.add({ ...base, top_peers: peers })).toBe(MAX_TALLY + 1 - 100);
    expect(e.snapshot({ ...base, top_peers: [] }).top_peers).toHaveLength(10);
    const t = new EpisodeTracker({ windowMs: W, sensor: 't', mode: 'replay' }, () => {});
    const f: Finding = {
      kind: 'horizontal-scan', host: '10.0.0.1', role: 'source', windowStart: T0, windowEnd: T0 + W, feature: 'max_peers_per_port',
      observed: 1, expected: 0, low: 0, high: 1, score: 9, evidence: { ...base, top_peers: peers }, rule: 'r',
    };
    t.observe([f], T0, T0 + W);
    expect(t.evidencePruned).toBe(MAX_TALLY + 1 - 100);
  });

  it('alert rate: past --max-alerts-per-hour the lowest-scoring episodes of the hour are suppressed, counted', () => {
    const out: string[] = [];
    const t = new EpisodeTracker({ windowMs: W, sensor: 't', mode: 'replay', maxAlertsPerHour: 1 }, (a) => out.push(`${a.host} ${a.state}`));
    const base = { top_ports: [], top_peers: [], sample_flows: [], flows: 1, packets: 1, bytes: 1 };
    const f = (host: string, score: number): Finding => ({
      kind: 'volume-surge', host, role: 'source', windowStart: T0, windowEnd: T0 + W, feature: 'bytes_out',
      observed: 1, expected: 0, low: 0, high: 1, score, evidence: base, rule: 'r',
    });
    t.observe([f('10.0.0.1', 5), f('10.0.0.2', 9), f('10.0.0.3', 7)], T0, T0 + W);
    t.finish();
    expect(out.filter((l) => l.endsWith(' open'))).toEqual(['10.0.0.2 open']);
    expect(sensorCapCounts({ aggregator: new WindowAggregator({ windowMs: W, latenessMs: 0, internal: new CidrSet([]) }, () => {}), tracker: t })['alerts-over-budget']).toBe(2);
  });

  it('syslog queue: sends past the queue while nothing is acknowledged are dropped and counted', async () => {
    const sink = new UdpSyslogSink({ host: '127.0.0.1', port: 9 }, { maxQueue: 2 });
    const a = alertFixture();
    let threw = false;
    try { for (let i = 0; i < 10; i++) sink.send(a); } catch { threw = true; }
    await sink.close(500);
    expect(threw).toBe(false);
    expect(sink.stats.dropped).toBeGreaterThanOrEqual(8);
    expect(syslogCapCounts([sink.stats])['syslog-dropped']).toBe(sink.stats.dropped);
  });

  it('replay prints the caps line: flows evicted, hosts over cap and alerts over the hourly budget', async () => {
    // the demo capture (captures/larkspur-demo.pcap) with every cap lowered far below its size
    const r = await cli(['replay', DEMO, '--internal', DEMO_INSIDE, '--max-flows', '500', '--max-hosts', '200', '--max-alerts-per-hour', '1', '--format', 'jsonl']);
    expect(r.code).toBe(0);
    const line = r.stderr.split('\n').find((l) => l.startsWith('caps reached:'));
    expect(line).toMatch(/flows-evicted=\d+/);
    expect(line).toMatch(/hosts-over-cap=\d+/);
    expect(line).toMatch(/alerts-over-budget=[1-9]\d*/);
    expect(r.stderr).toMatch(/windows 60, hosts 200,/);
  });
});
