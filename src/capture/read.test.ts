import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { gzipSync } from 'node:zlib';
import { afterAll, describe, expect, it } from 'vitest';
import { gunzipSource, openSource, type ByteSource } from '../ingest/source.js';
import type { InputProblem } from '../util/problem.js';
import { readCapture } from './index.js';
import { buildPcap, collect, frame, parseInChunks, type SeenPacket } from './testing.js';

const GOLDEN = fileURLToPath(new URL('../../test/golden/reader/', import.meta.url));
const dir = mkdtempSync(join(tmpdir(), 'tidewatch-capture-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

async function readPath(path: string, wrap: (s: ByteSource) => ByteSource = (s) => s) {
  const packets: SeenPacket[] = [];
  const problems: InputProblem[] = [];
  const src = wrap(await openSource(path));
  try {
    const summary = await readCapture(src, collect(packets), (p) => problems.push(p));
    return { packets, problems, summary };
  } finally {
    await src.close();
  }
}

describe('readCapture on a ByteSource from openSource()', () => {
  it('reads a golden pcapng file the same as the parser fed in small chunks', async () => {
    const path = GOLDEN + 'dpkt_ns.pcapng';
    const r = await readPath(path);
    const direct = parseInChunks(readFileSync(path), 17);
    expect(r.summary.problems).toEqual([]);
    expect(r.packets).toEqual(direct.packets);
    expect(r.summary.file).toBe(path);
    expect(r.summary.inputBytes).toBe(readFileSync(path).length);
  });

  it('reads a file larger than one 4 MiB source chunk, with records straddling chunk boundaries', async () => {
    const pkts = [];
    for (let i = 0; i < 4000; i++) pkts.push({ sec: 1_700_000_000 + i, sub: i, data: frame(1000 + (i % 700), i) });
    const file = buildPcap({ le: false }, pkts);
    expect(file.length).toBeGreaterThan(4 * 1024 * 1024);
    const path = join(dir, 'big.pcap');
    writeFileSync(path, file);
    const r = await readPath(path);
    expect(r.summary.problems).toEqual([]);
    expect(r.summary.packets).toBe(4000);
    expect(r.packets.map((p) => p.capLen)).toEqual(pkts.map((p) => p.data.length));
    expect(r.packets[3999]!.data).toEqual(Array.from(pkts[3999]!.data));
  });

  it('reads through gunzipSource; a corrupt gzip stream becomes a fatal read-error problem, not a throw', async () => {
    const file = buildPcap({}, [{ sec: 1, sub: 2, data: frame(60) }]);
    const gz = join(dir, 'a.pcap.gz');
    writeFileSync(gz, gzipSync(file));
    const ok = await readPath(gz, gunzipSource);
    expect(ok.summary.problems).toEqual([]);
    expect(ok.packets.length).toBe(1);
    const bad = join(dir, 'bad.pcap.gz');
    const z = gzipSync(buildPcap({}, [{ sec: 1, sub: 2, data: frame(5000) }]));
    z.fill(0x55, 20, 40);
    writeFileSync(bad, z);
    const r = await readPath(bad, gunzipSource);
    expect(r.summary.stopped).toBe(true);
    expect(r.problems.at(-1)).toMatchObject({ reason: 'read-error', fatal: true, file: bad });
  });

  it('reports a truncated file without throwing', async () => {
    const path = join(dir, 'cut.pcap');
    writeFileSync(path, buildPcap({}, [{ sec: 1, sub: 0, data: frame(60) }, { sec: 2, sub: 0, data: frame(60) }]).subarray(0, 150));
    const r = await readPath(path);
    expect(r.packets.length).toBe(1);
    expect(r.summary.truncated).toBe(true);
    expect(r.problems).toEqual([expect.objectContaining({ reason: 'truncated', offset: 100, file: path })]);
  });
});
