import { createSocket } from 'node:dgram';
import { readFileSync } from 'node:fs';
import { connect } from 'node:net';
import { join } from 'node:path';
import { Readable } from 'node:stream';
import { afterEach, describe, expect, it } from 'vitest';
import type { FlowRecord } from '../flow/record.js';
import { StreamSource } from '../ingest/source.js';
import { DEFAULT_INGEST } from '../ingest/types.js';
import { startCollector, parseListen, type CollectorHandle } from './collector.js';
import { ingestIpfix, ingestNetflowV9 } from './file-ingest.js';
import { v5PacketLength } from './netflow5.js';
import { v9PacketEnd } from './netflow9.js';

// The same scapy-made goldens as test/golden/flowlog.test.ts, delivered four ways.
const dir = join(import.meta.dirname, '..', '..', 'test', 'golden', 'flowlog');
const bytes = (f: string) => new Uint8Array(readFileSync(join(dir, f)));
const expected = (f: string) => JSON.parse(readFileSync(join(dir, `${f}.expected.json`), 'utf8')) as FlowRecord[];
const relabel = (recs: FlowRecord[], label: string) => recs.map((r) => ({ ...r, exporter: label + r.exporter.slice(r.exporter.lastIndexOf('/')) }));

function ipfixMessages(b: Uint8Array): Uint8Array[] {
  const out: Uint8Array[] = [];
  for (let p = 0; p < b.length; ) { const len = (b[p + 2]! << 8) | b[p + 3]!; out.push(b.subarray(p, p + len)); p += len; }
  return out;
}
function v9Packets(b: Uint8Array): Uint8Array[] {
  const out: Uint8Array[] = [];
  for (let p = 0; p < b.length; ) { const e = v9PacketEnd(b, p, b.length, true); out.push(b.subarray(p, e)); p = e; }
  return out;
}

async function until(cond: () => boolean, ms = 5000): Promise<void> {
  const t0 = Date.now();
  while (!cond()) {
    if (Date.now() - t0 > ms) throw new Error('timed out waiting for the collector');
    await new Promise((r) => setTimeout(r, 10));
  }
}

let handle: CollectorHandle | undefined;
afterEach(async () => { await handle?.close(); handle = undefined; });

describe('the same flows from a file, stdin, UDP and TCP', () => {
  it('stdin (a stream source) gives the file records, labelled stdin/ODID', async () => {
    const b = bytes('ipfix_mixed.ipfix');
    const got: FlowRecord[] = [];
    const chunks = [b.subarray(0, 100), b.subarray(100, 101), b.subarray(101)].map((c) => Buffer.from(c));
    await ingestIpfix(new StreamSource('-', Readable.from(chunks)), (r) => got.push(r), DEFAULT_INGEST);
    expect(got).toEqual(relabel(expected('ipfix_mixed.ipfix'), 'stdin'));
    const v9: FlowRecord[] = [];
    await ingestNetflowV9(new StreamSource('-', Readable.from([Buffer.from(bytes('netflow9_mixed.nf9'))])), (r) => v9.push(r), DEFAULT_INGEST);
    expect(v9).toEqual(relabel(expected('netflow9_mixed.nf9'), 'stdin'));
  });

  it('IPFIX over UDP and TCP, NetFlow v9 and v5 over UDP, on ephemeral 127.0.0.1 ports', async () => {
    const got: FlowRecord[] = [];
    handle = await startCollector({ ipfixUdp: '127.0.0.1:0', ipfixTcp: '127.0.0.1:0', netflowUdp: '127.0.0.1:0' }, (r) => got.push(r));
    const a = handle.addresses();
    expect(a.ipfixUdp!.address).toBe('127.0.0.1');
    const udp = createSocket('udp4');
    await new Promise<void>((r) => udp.bind(0, '127.0.0.1', () => r()));
    const me = `127.0.0.1:${udp.address().port}`;
    const send = (m: Uint8Array, port: number) => new Promise<void>((r, j) => udp.send(m, port, '127.0.0.1', (e) => (e ? j(e) : r())));

    const ipfixWant = expected('ipfix_mixed.ipfix');
    for (const m of ipfixMessages(bytes('ipfix_mixed.ipfix'))) await send(m, a.ipfixUdp!.port);
    await until(() => got.length >= ipfixWant.length);
    expect(got.splice(0)).toEqual(relabel(ipfixWant, me));

    const v9Want = expected('netflow9_mixed.nf9');
    for (const m of v9Packets(bytes('netflow9_mixed.nf9'))) await send(m, a.netflowUdp!.port);
    await until(() => got.length >= v9Want.length);
    expect(got.splice(0)).toEqual(relabel(v9Want, me));

    // the NetFlow port takes v5 too, each packet framed by its record count
    const v5Want = expected('netflow5_mixed.nf5');
    const v5 = bytes('netflow5_mixed.nf5');
    let v5Packets = 0;
    for (let p = 0; p < v5.length; v5Packets++) { const len = v5PacketLength(v5, p, v5.length - p); await send(v5.subarray(p, p + len), a.netflowUdp!.port); p += len; }
    await until(() => got.length >= v5Want.length);
    expect(got.splice(0)).toEqual(relabel(v5Want, me));
    udp.close();

    const sock = connect(a.ipfixTcp!.port, '127.0.0.1');
    await new Promise<void>((r) => sock.once('connect', () => r()));
    const tcpMe = `127.0.0.1:${sock.localPort}`;
    const file = bytes('ipfix_mixed.ipfix');
    sock.write(file.subarray(0, 37)); // framing by message Length across segments
    sock.end(file.subarray(37));
    await until(() => got.length >= ipfixWant.length);
    expect(got.splice(0)).toEqual(relabel(ipfixWant, tcpMe));

    await until(() => handle!.stats().exporters.some((e) => e.transport === 'tcp'));
    const s = handle.stats();
    expect(s.flows).toBe(2 * ipfixWant.length + v9Want.length + v5Want.length);
    expect(s.malformed).toBe(0);
    expect(s.sequenceLost).toBe(3 + 1 + 2 + 3); // per exporter session: IPFIX UDP 3, v9 1, v5 2, IPFIX TCP 3
    expect(s.datagrams).toBe(ipfixMessages(file).length + v9Packets(bytes('netflow9_mixed.nf9')).length + v5Packets);
    expect(s.exporters.map((e) => e.format).sort()).toEqual(['ipfix', 'ipfix', 'netflow5', 'netflow9']);
  });

  it('listen addresses: a bare port binds loopback; another host must be written', () => {
    expect(parseListen('4739')).toEqual({ host: '127.0.0.1', port: 4739 });
    expect(parseListen(':2055')).toEqual({ host: '127.0.0.1', port: 2055 });
    expect(parseListen('0.0.0.0:4739')).toEqual({ host: '0.0.0.0', port: 4739 });
    expect(parseListen('[::1]:4739')).toEqual({ host: '::1', port: 4739 });
    expect(() => parseListen('host:port')).toThrow(/HOST:PORT/);
  });
});

describe('runCollectorForFlows (the `flows --ipfix-listen` path)', () => {
  it('runs for --duration seconds and returns the counters; rejects a bad duration', async () => {
    const { runCollectorForFlows, formatCollectorSummary, formatListening } = await import('./cli-options.js');
    const got: FlowRecord[] = [];
    const t0 = Date.now();
    let listening = '';
    const stats = await runCollectorForFlows({ netflowListen: '127.0.0.1:0', duration: '0.2' }, (r) => got.push(r),
      { onListening: (a) => { listening = formatListening(a); } });
    expect(listening).toMatch(/^listening on netflow9\/udp 127\.0\.0\.1:\d+$/);
    expect(Date.now() - t0).toBeGreaterThanOrEqual(150);
    expect(stats.flows).toBe(0);
    expect(formatCollectorSummary(stats)).toMatch(/^collector: 0 flows from 0 exporters/);
    await expect(runCollectorForFlows({ ipfixListen: '127.0.0.1:0', duration: 'soon' }, () => {})).rejects.toThrow(/--duration/);
  });
});
