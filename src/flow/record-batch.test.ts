import { describe, expect, it } from 'vitest';
import { OUTCOMES, type FlowRecord } from './record.js';
import { BatchReader, BatchWriter } from './record-batch.js';

describe('record batches between threads', () => {
  it('give back the same records in order: fractional times, IPv6, every outcome, vlan or none', () => {
    const recs: FlowRecord[] = OUTCOMES.map((outcome, i) => ({
      start: 1_773_133_200_000.25 + i, end: 1_773_133_201_000.5 + i, proto: i === 4 ? 58 : 6,
      src: i % 2 ? '2001:db8::1' : '192.0.2.1', dst: i % 2 ? '2001:db8:60::5' : '198.51.100.9',
      sport: 40000 + i, dport: 443, pkts: 3, bytes: 2 ** 40 + i, rpkts: 0, rbytes: 0, flags: 0x02, rflags: 0x12, outcome,
      exporter: `192.0.2.200:4739/${i}`, ...(i === 2 ? { vlan: 100 } : {}),
    }));
    const w = new BatchWriter(4);
    const reader = new BatchReader();
    const got: FlowRecord[] = [];
    for (const r of recs) {
      w.add(r);
      if (w.full) reader.read(w.take(), (x) => got.push(x));
    }
    reader.read(w.take(), (x) => got.push(x));
    expect(got).toEqual(recs);
  });

  it('send each string once across batches, and start the table again past its cap', () => {
    const base: FlowRecord = {
      start: 0, end: 1, proto: 17, src: '192.0.2.1', dst: '198.51.100.9', sport: 5353, dport: 53, pkts: 1, bytes: 70,
      rpkts: 1, rbytes: 90, flags: 0, rflags: 0, outcome: 'established', exporter: 'e',
    };
    const w = new BatchWriter(2);
    const reader = new BatchReader();
    w.add(base); w.add(base);
    const first = w.take();
    expect(first.strings).toEqual(['192.0.2.1', '198.51.100.9', 'e']);
    w.add({ ...base, dst: '198.51.100.10' });
    const second = w.take();
    expect(second.strings).toEqual(['198.51.100.10']);
    const got: FlowRecord[] = [];
    reader.read(first, (r) => got.push(r));
    reader.read(second, (r) => got.push(r));
    expect(got.map((r) => r.dst)).toEqual(['198.51.100.9', '198.51.100.9', '198.51.100.10']);
    // past the cap: the batch after it says reset and carries every string its records use
    const CAP = 1000;
    const big = new BatchWriter(1, CAP);
    const bigReader = new BatchReader();
    let resetAt = -1;
    for (let i = 0; i <= CAP && resetAt < 0; i++) {
      const r = { ...base, src: `10.${(i >> 16) & 255}.${(i >> 8) & 255}.${i & 255}` };
      big.add(r);
      const b = big.take();
      const out: FlowRecord[] = [];
      bigReader.read(b, (x) => out.push(x));
      expect(out).toEqual([r]);
      if (b.reset) { resetAt = i; expect(b.strings).toEqual([r.src, r.dst, r.exporter]); }
    }
    expect(resetAt).toBe(CAP - 2);
  });
  it('refuses a capacity that is not a positive integer', () => {
    expect(() => new BatchWriter(0)).toThrow(RangeError);
  });
});
