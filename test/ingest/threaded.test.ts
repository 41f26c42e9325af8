import { existsSync, mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
// the compiled modules: the reading thread runs dist/src/ingest/reader-worker.js (npm test builds first)
import { ingestInput } from '../../dist/src/ingest/index.js';
import { ingestOnThread } from '../../dist/src/ingest/threaded.js';
import { DEFAULT_INGEST, type IngestOptions } from '../../dist/src/ingest/types.js';
import type { FlowRecord } from '../../dist/src/flow/record.js';
import type { InputProblem } from '../../dist/src/util/problem.js';

const ROOT = new URL('../../', import.meta.url).pathname;
const inputs = [
  'captures/larkspur-demo.pcap',
  'test/golden/captures/pcapng-two-interfaces.pcapng',
  'test/golden/captures/ipv4-fragments.pcap',
  'test/golden/flowlog/ipfix_mixed.ipfix',
  'test/golden/flowlog/netflow9_mixed.nf9',
].map((p) => join(ROOT, p)).filter((p) => existsSync(p));

async function both(path: string, opts: Partial<IngestOptions> = {}) {
  const run = async (fn: typeof ingestInput) => {
    const records: FlowRecord[] = [];
    const problems: InputProblem[] = [];
    const formats: string[] = [];
    const summary = await fn(path, (r) => records.push(r), {
      ...DEFAULT_INGEST, ...opts, onProblem: (p) => problems.push(p), onFormat: (f) => formats.push(f),
    });
    return { records, problems, formats, summary };
  };
  return { main: await run(ingestInput), thread: await run(ingestOnThread) };
}

describe('reading on a second thread (ingestOnThread) gives what ingestInput gives (same code, other thread; no outside source)', () => {
  it('has inputs to compare', () => expect(inputs.length).toBeGreaterThanOrEqual(2));
  for (const path of inputs) {
    it(`same records in the same order, same summary: ${path.slice(ROOT.length)}`, async () => {
      const { main, thread } = await both(path);
      expect(thread.records.length).toBe(main.records.length);
      expect(thread.records).toEqual(main.records);
      expect(thread.summary).toEqual(main.summary);
      expect(thread.formats).toEqual(main.formats);
    });
  }

  it('a truncated file: the records before the cut, the same problem with its byte offset', async () => {
    const { readFileSync } = await import('node:fs');
    const whole = readFileSync(inputs[0]!);
    const dir = mkdtempSync(join(tmpdir(), 'tw-thread-'));
    const cut = join(dir, 'cut.pcap');
    writeFileSync(cut, whole.subarray(0, Math.floor(whole.length / 2) + 7));
    const { main, thread } = await both(cut);
    expect(thread.summary.truncated).toBe(true);
    expect(thread.records).toEqual(main.records);
    expect(thread.problems).toEqual(main.problems);
    expect(thread.problems[0]?.offset).toBeGreaterThan(0);
  });

  it('an input it cannot open or recognise rejects with the same one-line error', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'tw-thread-'));
    const junk = join(dir, 'junk.bin');
    writeFileSync(junk, Buffer.from([0xde, 0xad, 0xbe, 0xef, 0x00, 0x01, 0x02, 0x03, 0xff, 0xfe, 0x00, 0x00, 0x10, 0x20, 0x30, 0x40]));
    await expect(ingestOnThread(junk, () => {}, DEFAULT_INGEST)).rejects.toThrow(/junk\.bin: not a recognised capture/);
    await expect(ingestOnThread(join(dir, 'missing.pcap'), () => {}, DEFAULT_INGEST)).rejects.toThrow(/missing\.pcap: cannot open \(ENOENT\)/);
  });

  it('a main thread slower than the reader: small batches, two in flight, nothing lost or reordered', async () => {
    const main: FlowRecord[] = [];
    await ingestInput(inputs[0]!, (r) => main.push(r), DEFAULT_INGEST);
    const got: FlowRecord[] = [];
    const slowSink = (r: FlowRecord) => {
      got.push(r);
      if (got.length % 500 === 0) { const until = Date.now() + 2; while (Date.now() < until); }
    };
    const summary = await ingestOnThread(inputs[0]!, slowSink, DEFAULT_INGEST, { batchRecords: 16, maxInFlight: 2 });
    expect(summary.flows).toBe(main.length);
    expect(got).toEqual(main);
  });

  it('a sink that throws stops the read and rejects with its error', async () => {
    await expect(ingestOnThread(inputs[0]!, () => { throw new Error('sink failed'); }, DEFAULT_INGEST)).rejects.toThrow('sink failed');
  });
});

describe('replay of several inputs: the next file is read ahead (no outside source: same code, one thread)', () => {
  it('prints the same alert lines and the same summary with and without the reading thread', async () => {
    const { spawnSync } = await import('node:child_process');
    const { readFileSync } = await import('node:fs');
    const cli = join(ROOT, 'dist/src/cli/main.js');
    const dir = mkdtempSync(join(tmpdir(), 'tw-thread-'));
    const whole = readFileSync(inputs[0]!);
    const first = join(dir, 'first.pcap'), cut = join(dir, 'cut.pcap');
    writeFileSync(first, whole.subarray(0, Math.floor(whole.length * 0.6)));
    writeFileSync(cut, whole);
    // a missing file in the middle: reported, and the thread goes on with the next one
    const args = ['replay', '--format', 'jsonl', first, join(dir, 'missing.pcap'), cut, join(ROOT, 'test/golden/flowlog/ipfix_mixed.ipfix')];
    const threaded = spawnSync(process.execPath, [cli, ...args], { encoding: 'utf8' });
    const single = spawnSync(process.execPath, [cli, ...args, '--no-read-thread'], { encoding: 'utf8' });
    expect(threaded.status).toBe(3);
    expect(single.status).toBe(3);
    expect(threaded.stderr).toContain('missing.pcap: cannot open (ENOENT)');
    expect(threaded.stdout.length).toBeGreaterThan(0);
    expect(threaded.stdout).toBe(single.stdout);
    expect(threaded.stderr).toBe(single.stderr);
  });
});

describe('the sensor keeps no record it is given (what lets the reading thread reuse one object; no outside source)', () => {
  it('one object filled anew for every record gives the same alert lines as a fresh object each', async () => {
    const { Sensor } = await import('../../dist/src/sensor/sensor.js');
    const { alertToJson } = await import('../../dist/src/alert/serialize.js');
    const { DEFAULT_INTERNAL } = await import('../../dist/src/util/addr.js');
    const records: FlowRecord[] = [];
    await ingestInput(inputs[0]!, (r) => records.push(r), DEFAULT_INGEST);
    const run = (feed: (sink: (r: FlowRecord) => void) => void) => {
      const lines: string[] = [];
      const sensor = new Sensor({ windowMs: 60_000, latenessMs: 5_000, alpha: 0.001, internal: DEFAULT_INTERNAL, sensor: 't', mode: 'replay' },
        (a) => lines.push(alertToJson(a)));
      feed(sensor.record);
      sensor.finish();
      return lines;
    };
    const fresh = run((sink) => { for (const r of records) sink({ ...r }); });
    const scratch = { ...records[0]! };
    const reused = run((sink) => {
      for (const r of records) { Object.assign(scratch, r); if (r.vlan === undefined) scratch.vlan = undefined; sink(scratch); }
    });
    expect(fresh.length).toBeGreaterThan(3);
    expect(reused).toEqual(fresh);
  });
});
