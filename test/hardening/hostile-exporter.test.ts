/**
 * Hostile exporters on loopback: one UDP source per format (IPFIX, NetFlow v9) floods the collector with template redefinitions, fresh
 * template ids over many observation domains, malformed sets, spoofed sequence numbers and data sets
 * for templates never sent, while a well-behaved exporter sends on the same listener. The collector runs
 * in a child process that samples its own RSS. Layouts: RFC 7011 sections 3.1-3.4 (IPFIX), RFC 3954
 * sections 5.1-5.3 (NetFlow v9).
 */
import { spawn, type ChildProcessWithoutNullStreams } from 'node:child_process';
import { createSocket, type Socket } from 'node:dgram';
import { createInterface } from 'node:readline';
import { pathToFileURL } from 'node:url';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { Rng } from '../fuzz/mutate.js';
import { Wire, ipfixMessage, ipfixSet, templateRecord, concat } from '../../src/flowlog/testing.js';
import { ROOT } from './helpers.js';

/** RSS growth allowed over the collector's idle RSS during the flood (docs/operations.md, Caps): garbage included. */
export const RSS_GROWTH_BOUND_MB = 96;
/** JS heap still held after the flood and a full GC (the caps' bound on what the sessions keep). */
export const RETAINED_BOUND_MB = 24;

const COLLECTOR = pathToFileURL(join(ROOT, 'dist', 'src', 'flowlog', 'collector.js')).href;
const CHILD = `
import { startCollector } from ${JSON.stringify(COLLECTOR)};
const flows = new Map();
const c = await startCollector({ ipfixUdp: '127.0.0.1:0', netflowUdp: '127.0.0.1:0' }, (r) => flows.set(r.exporter, (flows.get(r.exporter) ?? 0) + 1));
globalThis.gc();
const idle = process.memoryUsage().rss, idleHeap = process.memoryUsage().heapUsed;
let peak = idle;
const t = setInterval(() => { peak = Math.max(peak, process.memoryUsage().rss); }, 20);
process.stdout.write(JSON.stringify({ port: c.addresses().ipfixUdp.port, v9port: c.addresses().netflowUdp.port, idle }) + '\\n');
process.stdin.once('data', async () => {
  clearInterval(t);
  peak = Math.max(peak, process.memoryUsage().rss);
  globalThis.gc(); // what the collector still holds after the flood: templates, waiting sets, counters
  const retained = process.memoryUsage().heapUsed - idleHeap;
  await c.close();
  process.stdout.write(JSON.stringify({ idle, peak, retained, stats: c.stats(), flows: [...flows] }) + '\\n');
  process.exit(0);
});
`;

const FLOW_FIELDS = [[8, 4], [12, 4], [7, 2], [11, 2], [4, 1], [1, 4], [2, 4], [150, 4], [151, 4]] as const;

function goodMessage(seq: number): Uint8Array {
  const w = new Wire();
  for (let i = 0; i < 10; i++) {
    w.ip4('192.0.2.10').ip4(`198.51.100.${i + 1}`).u16(40000 + i).u16(443).u8(6).u32(1000).u32(10).u32(1_700_000_000).u32(1_700_000_001);
  }
  return ipfixMessage(7, seq, 1_700_000_000, ipfixSet(2, templateRecord(300, FLOW_FIELDS)), ipfixSet(300, w.bytes()));
}

/** One hostile datagram of the kind `i % 5`, varied by `r`. */
function hostile(i: number, r: Rng): Uint8Array {
  const seq = r.next(); // spoofed: any value
  const domain = r.below(5000);
  switch (i % 5) {
    case 0: { // fresh template ids
      const recs: Uint8Array[] = [];
      for (let k = 0; k < 300; k++) recs.push(templateRecord(256 + r.below(65_280), [[8, 4], [12, 4], [r.below(500), 1 + r.below(8)]]));
      return ipfixMessage(domain, seq, 1_700_000_000, ipfixSet(2, concat(...recs)));
    }
    case 1: { // redefinitions of the same ids, each larger (up to ~15 k fields)
      const fields: number[][] = [];
      const n = 1 + r.below(15_000);
      for (let k = 0; k < n; k++) fields.push([1 + (k % 400), 4]);
      return ipfixMessage(r.below(4), seq, 1_700_000_000, ipfixSet(2, templateRecord(256 + r.below(8), fields)));
    }
    case 2: { // malformed sets: random bytes, lengths that lie
      const body = new Uint8Array(16 + r.below(2000));
      for (let k = 0; k < body.length; k++) body[k] = r.below(256);
      return ipfixMessage(domain, seq, 1_700_000_000, body);
    }
    case 3: // data sets for templates never defined (the wait buffer)
      return ipfixMessage(domain, seq, 1_700_000_000, ipfixSet(256 + r.below(65_000), new Uint8Array(40_000 + r.below(20_000))));
    default: { // a header claiming more than the datagram holds, and withdrawals of unknown ids
      const m = ipfixMessage(domain, seq, 1_700_000_000, ipfixSet(2, new Wire().u16(256 + r.below(1000)).u16(0).bytes()));
      if (r.below(2) === 0) { m[2] = 0xff; m[3] = 0xff; }
      return m;
    }
  }
}

/** A NetFlow v9 export packet (RFC 3954 section 5.1 header) around FlowSets built by `sets`. */
function v9Packet(sourceId: number, seq: number, sets: (w: Wire) => void): Uint8Array {
  const w = new Wire().u16(9).u16(1).u32(60_000).u32(1_700_000_000).u32(seq).u32(sourceId);
  sets(w);
  return w.bytes();
}

function v9Template(w: Wire, id: number, fields: readonly (readonly number[])[]): void {
  w.u16(0).u16(8 + 4 * fields.length).u16(id).u16(fields.length);
  for (const [t, l] of fields) w.u16(t!).u16(l!);
}

function goodV9(seq: number): Uint8Array {
  return v9Packet(3, seq, (w) => {
    v9Template(w, 400, FLOW_FIELDS.slice(0, 7)); // addresses, ports, protocol, octets, packets
    w.u16(400).u16(4 + 10 * 21);
    for (let i = 0; i < 10; i++) w.ip4('192.0.2.20').ip4(`203.0.113.${i + 1}`).u16(50000 + i).u16(53).u8(17).u32(100).u32(1);
  });
}

/** The same kinds of hostility in NetFlow v9: template floods over Source IDs, big redefinitions, junk, orphan data. */
function hostileV9(i: number, r: Rng): Uint8Array {
  return v9Packet(r.below(5000), r.next(), (w) => {
    switch (i % 4) {
      case 0: for (let k = 0; k < 200; k++) v9Template(w, 256 + r.below(65_280), [[8, 4], [12, 4], [r.below(300), 1 + r.below(8)]]); break;
      case 1: v9Template(w, 256 + r.below(8), Array.from({ length: 1 + r.below(12_000) }, (_, k) => [1 + (k % 300), 4])); break;
      case 2: for (let k = 0, n = 8 + r.below(1500); k < n; k++) w.u8(r.below(256)); break;
      default: w.u16(256 + r.below(65_000)).u16(40_004).raw(new Uint8Array(40_000));
    }
  });
}

function send(s: Socket, m: Uint8Array, port: number): Promise<void> {
  return new Promise((resolve) => s.send(m, port, '127.0.0.1', () => resolve()));
}

interface Exp { exporter: string; format: string; messages: number; flows: number; malformed: number; unknownTemplate: number; datagrams: number }

function lines(child: ChildProcessWithoutNullStreams): AsyncIterator<string> {
  return createInterface({ input: child.stdout })[Symbol.asyncIterator]();
}

describe('hostile exporter (loopback)', () => {
  it('floods of templates, ids, malformed sets and spoofed sequences keep RSS bounded; a good exporter still decodes', async () => {
    const child = spawn(process.execPath, ['--expose-gc', '--input-type=module', '-e', CHILD], { stdio: ['pipe', 'pipe', 'pipe'] });
    let err = '';
    child.stderr.on('data', (d) => { err += String(d); });
    const out = lines(child);
    const first = await out.next();
    if (first.done) throw new Error(`collector child failed: ${err}`);
    const { port, v9port } = JSON.parse(first.value) as { port: number; v9port: number };

    const bad = createSocket('udp4'), good = createSocket('udp4'), badV9 = createSocket('udp4'), goodV9s = createSocket('udp4');
    const r = new Rng(20_260_310);
    const HOSTILE = 5000;
    let goodSent = 0;
    const summary: string[] = [];
    for (let i = 0; i < HOSTILE; i++) {
      await send(bad, hostile(i, r), port);
      await send(badV9, hostileV9(i, r), v9port);
      if (i % 50 === 0) {
        await send(good, goodMessage(goodSent * 10), port);
        await send(goodV9s, goodV9(goodSent), v9port);
        goodSent++;
        await new Promise((res) => setImmediate(res)); // let the collector read: a flood, not a UDP drop test
      }
    }
    await new Promise((res) => setTimeout(res, 300));
    child.stdin.write('stop\n');
    const last = await out.next();
    bad.close(); good.close(); badV9.close(); goodV9s.close();
    if (last.done) throw new Error(`collector child died: ${err}`);
    const res = JSON.parse(last.value) as {
      idle: number; peak: number; retained: number; flows: [string, number][];
      stats: { exporters: Exp[]; templatesOverCap: number; pendingOverCap: number };
    };
    expect(res.stats.exporters).toHaveLength(4);
    for (const format of ['ipfix', 'netflow9'] as const) {
      const two = res.stats.exporters.filter((e) => e.format === format);
      const [g, h] = two[0]!.flows > 0 ? [two[0]!, two[1]!] : [two[1]!, two[0]!];
      // the well-behaved exporter: every message it got through decoded whole, none malformed
      expect(g.malformed, format).toBe(0);
      expect(g.unknownTemplate, format).toBe(0);
      expect(g.flows, format).toBe(g.messages * 10);
      expect(g.messages, format).toBeGreaterThan(goodSent / 2);
      // the hostile one: seen, refused and counted, not decoded into flows
      expect(h.datagrams, format).toBeGreaterThan(HOSTILE / 2);
      expect(h.flows, format).toBe(0);
      expect(h.malformed, format).toBeGreaterThan(0);
      summary.push(`${format}: hostile datagrams read ${h.datagrams}, good messages ${g.messages}/${goodSent}`);
    }
    expect(res.stats.templatesOverCap).toBeGreaterThan(0);
    expect(res.stats.pendingOverCap).toBeGreaterThan(0);
    const growthMb = (res.peak - res.idle) / 2 ** 20;
    process.stdout.write(`hostile exporter: idle RSS ${(res.idle / 2 ** 20).toFixed(1)} MiB, peak ${(res.peak / 2 ** 20).toFixed(1)} MiB `
      + `(+${growthMb.toFixed(1)} MiB; bound ${RSS_GROWTH_BOUND_MB}), heap retained after GC ${(res.retained / 2 ** 20).toFixed(1)} MiB `
      + `(bound ${RETAINED_BOUND_MB}); ${summary.join('; ')}\n`);
    expect(growthMb).toBeLessThan(RSS_GROWTH_BOUND_MB);
    expect(res.retained / 2 ** 20).toBeLessThan(RETAINED_BOUND_MB);
  }, 60_000);
});
