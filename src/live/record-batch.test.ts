import { describe, expect, it } from 'vitest';
import { OUTCOMES, type FlowRecord } from '../flow/record.js';
import { BatchWriter, readBatch } from './record-batch.js';

describe('record batches between threads', () => {
  it('give back the same records in order: fractional times, IPv6, every outcome, vlan or none', () => {
    const recs: FlowRecord[] = OUTCOMES.map((outcome, i) => ({
      start: 1_773_133_200_000.25 + i, end: 1_773_133_201_000.5 + i, proto: i === 4 ? 58 : 6,
      src: i % 2 ? '2001:db8::1' : '192.0.2.1', dst: i % 2 ? '2001:db8:60::5' : '198.51.100.9',
      sport: 40000 + i, dport: 443, pkts: 3, bytes: 2 ** 40 + i, rpkts: 0, rbytes: 0, flags: 0x02, rflags: 0x12, outcome,
      exporter: `192.0.2.200:4739/${i}`, ...(i === 2 ? { vlan: 100 } : {}),
    }));
    const w = new BatchWriter(4);
    const got: FlowRecord[] = [];
    for (const r of recs) {
      w.add(r);
      if (w.full) readBatch(w.take(), (x) => got.push(x));
    }
    readBatch(w.take(), (x) => got.push(x));
    expect(got).toEqual(recs);
  });

  it('refuses a capacity whose string indexes would not fit', () => {
    expect(() => new BatchWriter(30_000)).toThrow(RangeError);
  });
});
