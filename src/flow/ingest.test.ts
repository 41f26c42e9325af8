import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { ACK, SYN, ether, ipv4, tcp, udp } from '../../test/bench/frames.js';
import { PcapWriter } from '../capture/writer.js';
import { openSource } from '../ingest/source.js';
import { DEFAULT_INGEST } from '../ingest/types.js';
import type { InputProblem } from '../util/problem.js';
import { ingestCapture } from './ingest.js';
import type { FlowRecord } from './record.js';

const dir = mkdtempSync(join(tmpdir(), 'tidewatch-ingest-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
const T0 = 1_700_000_040;
const C = '10.60.2.9', S = '203.0.113.80';

function write(name: string, frames: [number, Uint8Array][]): string {
  const path = join(dir, name);
  const w = new PcapWriter(path, {});
  for (const [t, f] of frames) w.write(f, 0, f.length, f.length, T0 + Math.floor(t), Math.round((t % 1) * 1e9));
  w.close();
  return path;
}

async function ingest(path: string, opts = DEFAULT_INGEST) {
  const recs: FlowRecord[] = [];
  const problems: InputProblem[] = [];
  const src = await openSource(path);
  try {
    const summary = await ingestCapture(src, (r) => recs.push(r), { ...opts, onProblem: (p) => problems.push(p) });
    return { summary, recs, problems };
  } finally {
    await src.close();
  }
}

const frames: [number, Uint8Array][] = [
  [0.25, ether(0x0800, ipv4({ src: C, dst: S, proto: 6, payload: tcp(41000, 80, SYN) }))],
  [0.5, ether(0x0800, ipv4({ src: S, dst: C, proto: 6, payload: tcp(80, 41000, SYN | ACK) }))],
  [0.75, ether(0x0806, new Uint8Array(28))],
  [1, ether(0x0800, ipv4({ src: C, dst: S, proto: 6, payload: tcp(41000, 80, ACK) }))],
  [65, ether(0x0800, ipv4({ src: C, dst: S, proto: 17, payload: udp(5000, 53, 30) }))],
];

describe('ingestCapture', () => {
  it('summarises packets, IP bytes, flows, time span, decode problems and counters', async () => {
    const { summary, recs } = await ingest(write('a.pcap', frames));
    expect(summary).toMatchObject({
      file: join(dir, 'a.pcap'), format: 'pcap', packets: 5, records: 5, bytes: 40 * 3 + 58, flows: 2,
      firstMs: (T0 + 0.25) * 1000, lastMs: (T0 + 65) * 1000, problemCounts: { arp: 1 }, truncated: false,
    });
    expect(summary.counters).toMatchObject({ decodedPackets: 4, skippedPackets: 1, distinctFlows: 2, droppedByCapture: 0, untimed: 0 });
    expect(summary.stoppedBy).toBeUndefined();
    expect(recs.map((r) => [r.proto, r.outcome, r.exporter])).toEqual([[6, 'established', 'a.pcap'], [17, 'unanswered', 'a.pcap']]);
  });

  it('a packet with a corrupt timestamp a year ahead is skipped and reported; the flows are as without it', async () => {
    const year = 365 * 86_400;
    const bogus: [number, Uint8Array] = [year, ether(0x0800, ipv4({ src: '10.60.2.77', dst: S, proto: 17, payload: udp(5001, 53, 30) }))];
    const clean = await ingest(write('clean.pcap', frames));
    const { summary, recs, problems } = await ingest(write('bogus.pcap', [...frames.slice(0, 2), bogus, ...frames.slice(2)]));
    expect(recs).toEqual(clean.recs.map((r) => ({ ...r, exporter: 'bogus.pcap' })));
    expect(summary).toMatchObject({ packets: 6, lastMs: (T0 + 65) * 1000, problemCounts: { arp: 1, 'timestamp-outlier': 1 } });
    // its record header follows the file header (24) and two records of 16 + 54 octets (SYN, SYN-ACK)
    expect(problems.map((p) => [p.reason, p.offset])).toEqual([['timestamp-outlier', 24 + 2 * (16 + 54)]]);
  });

  it('a truncated file keeps the flows before the cut and reports it', async () => {
    const path = write('b.pcap', frames);
    const bytes = readFileSync(path);
    writeFileSync(path, bytes.subarray(0, bytes.length - 5));
    const { summary, recs, problems } = await ingest(path);
    expect(summary.truncated).toBe(true);
    expect(summary.packets).toBe(4);
    expect(summary.problemCounts.truncated).toBe(1);
    expect(recs).toHaveLength(1);
    expect(problems.map((p) => p.reason)).toEqual(['truncated']);
  });

  it('a file that is not a capture stops at byte 0 with a fatal problem', async () => {
    const path = join(dir, 'c.pcap');
    writeFileSync(path, Buffer.from('not a capture at all, just text'));
    const { summary, recs } = await ingest(path);
    expect(summary.stoppedBy?.offset).toBe(0);
    expect(summary.stoppedBy?.fatal).toBe(true);
    expect(recs).toHaveLength(0);
    expect(Number.isNaN(summary.firstMs)).toBe(true);
  });

  it('a full table counts evictions among the problems', async () => {
    const many: [number, Uint8Array][] = [];
    for (let i = 0; i < 10; i++) many.push([i, ether(0x0800, ipv4({ src: C, dst: S, proto: 17, payload: udp(6000 + i, 53, 10) }))]);
    const { summary, recs } = await ingest(write('d.pcap', many), { ...DEFAULT_INGEST, maxFlows: 4 });
    expect(summary.problemCounts['flow-evicted']).toBeGreaterThan(0);
    expect(recs.reduce((n, r) => n + r.pkts, 0)).toBe(10);
  });
});
