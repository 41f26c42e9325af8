import { describe, expect, it } from 'vitest';
import { MAX_KEPT_PROBLEMS } from './limits.js';
import { frame, parseInChunks, PcapngBuilder } from './testing.js';

const F60 = frame(60, 1);
/** SHB 28 + IDB 20: where the first block after them starts. */
const AFTER_IDB = 48;

function patch32le(file: Uint8Array, at: number, v: number): Uint8Array {
  const out = Uint8Array.from(file);
  new DataView(out.buffer).setUint32(at, v, true);
  return out;
}

function fatalAt(file: Uint8Array, chunk = 4096) {
  const r = parseInChunks(file, chunk);
  expect(r.summary.stopped).toBe(true);
  const last = r.summary.problems[r.summary.problems.length - 1]!;
  expect(last.fatal).toBe(true);
  expect(last.file).toBe('test.cap');
  return { ...r, last };
}

describe('pcapng impossible lengths stop the file at the block (pcapng draft, general block structure)', () => {
  const good = new PcapngBuilder().shb().idb().epb(0, 1n, F60).epb(0, 2n, F60).bytes();
  const second = AFTER_IDB + 92;

  it('total length not a multiple of 4', () => {
    const { last, packets } = fatalAt(patch32le(good, second + 4, 94));
    expect([last.reason, last.offset, packets.length]).toEqual(['bad-block-length', second, 1]);
  });

  it('total length below 12', () => {
    expect(fatalAt(patch32le(good, second + 4, 8)).last).toMatchObject({ reason: 'bad-block-length', offset: second });
  });

  it('trailing length differs from the leading one', () => {
    const { last, packets } = fatalAt(patch32le(good, second + 88, 96), 7);
    expect([last.reason, last.offset, packets.length]).toEqual(['block-length-mismatch', second, 1]);
  });

  it('captured length beyond the block room', () => {
    expect(fatalAt(patch32le(good, second + 20, 61)).last).toMatchObject({ reason: 'captured-exceeds-block', offset: second });
  });

  it('captured length above the 256 KiB cap (METHODS 1.1 [P])', () => {
    const big = new PcapngBuilder().shb().idb().epb(0, 1n, frame(262_148)).bytes();
    expect(fatalAt(big, 1 << 16).last).toMatchObject({ reason: 'record-too-long', offset: AFTER_IDB });
  });

  it('a parsed block below its minimum length or above the buffering cap', () => {
    const short = new PcapngBuilder().shb().block(6, new Uint8Array(8)).bytes();
    expect(fatalAt(short).last).toMatchObject({ reason: 'block-too-short', offset: 28 });
    const huge = patch32le(good, second + 4, 8 << 20);
    expect(fatalAt(huge).last).toMatchObject({ reason: 'block-too-long', offset: second });
  });

  it('an SHB with a bad byte-order magic, first or later', () => {
    const bad = patch32le(good, 8, 0x12345678);
    expect(fatalAt(bad).last).toMatchObject({ reason: 'bad-byte-order-magic', offset: 0 });
    const two = new Uint8Array([...good, ...patch32le(good, 8, 0)]);
    const r = fatalAt(two, 5);
    expect(r.last).toMatchObject({ reason: 'bad-byte-order-magic', offset: good.length });
    expect(r.packets.length).toBe(2);
  });

  it('a skipped block whose trailing length is wrong, streamed across chunks', () => {
    const file = new PcapngBuilder().shb().block(0x0a, frame(10_000)).bytes();
    const bad = patch32le(file, file.length - 4, 12);
    expect(fatalAt(bad, 1000).last).toMatchObject({ reason: 'block-length-mismatch', offset: 28 });
  });
});

describe('pcapng truncation keeps what came before (METHODS 1.1 [P])', () => {
  const file = new PcapngBuilder().shb().idb().epb(0, 1n, F60).block(0x0a, frame(9000)).epb(0, 2n, F60).bytes();

  it('inside a packet block', () => {
    const { packets, summary } = parseInChunks(file.subarray(0, file.length - 10), 100);
    expect(packets.length).toBe(1);
    expect(summary.truncated).toBe(true);
    expect(summary.problems).toEqual([expect.objectContaining({ reason: 'truncated', offset: file.length - 92, fatal: false })]);
  });

  it('inside a skipped block being streamed', () => {
    const { packets, summary } = parseInChunks(file.subarray(0, AFTER_IDB + 92 + 500), 64);
    expect(packets.length).toBe(1);
    expect(summary.problems).toEqual([expect.objectContaining({ reason: 'truncated', offset: AFTER_IDB + 92 })]);
  });

  it('inside a block header', () => {
    const { summary } = parseInChunks(file.subarray(0, AFTER_IDB + 5), 1);
    expect(summary.problems).toEqual([expect.objectContaining({ reason: 'truncated', offset: AFTER_IDB })]);
  });
});

describe('problem bookkeeping', () => {
  it(`keeps at most ${MAX_KEPT_PROBLEMS} problem objects but counts all, and tells the callback each`, () => {
    const b = new PcapngBuilder().shb().idb();
    for (let i = 0; i < 250; i++) b.epb(9, 1n, frame(4));
    const { summary, problems } = parseInChunks(b.bytes(), 4096);
    expect(summary.problems.length).toBe(MAX_KEPT_PROBLEMS);
    expect(summary.problemCounts).toEqual({ 'unknown-interface': 250 });
    expect(problems.length).toBe(250);
  });
});
