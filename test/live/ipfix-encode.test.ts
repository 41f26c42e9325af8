import { describe, expect, it } from 'vitest';
import { DEFAULT_INGEST } from '../../src/ingest/types.js';
import { ingestIpfix } from '../../src/flowlog/file-ingest.js';
import type { FlowRecord } from '../../src/flow/record.js';
import { memorySource } from '../../src/flowlog/testing.js';
import { encodeIpfix } from './ipfix-encode.js';

const rec = (o: Partial<FlowRecord>): FlowRecord => ({
  start: 1_773_133_200_000, end: 1_773_133_201_500, proto: 6, src: '192.0.2.10', dst: '198.51.100.7', sport: 40000, dport: 443,
  pkts: 10, bytes: 1500, rpkts: 8, rbytes: 9000, flags: 0x1b, rflags: 0x1b, outcome: 'established', exporter: 'x', ...o,
});

describe('test IPFIX encoder', () => {
  it('round-trips through the IPFIX file ingest (tuple, counts, flags, ms times; RFC 7011, RFC 5103)', async () => {
    const recs = [rec({}), rec({ src: '2001:db8::1', dst: '2001:db8::2', proto: 17, sport: 53, dport: 5353, flags: 0, rflags: 0 }),
      rec({ proto: 1, sport: 0, dport: 0x0800, flags: 0, rflags: 0 })];
    const many = Array.from({ length: 100 }, (_, i) => recs[i % 3]!);
    const msgs = encodeIpfix(many, { maxBytes: 1400, templateEvery: 4 });
    expect(msgs.length).toBeGreaterThan(3);
    for (const m of msgs) expect(m.length).toBeLessThanOrEqual(1400);
    const got: FlowRecord[] = [];
    const s = await ingestIpfix(memorySource(Buffer.concat(msgs)), (r) => got.push(r), DEFAULT_INGEST);
    expect(s.counters.sequenceLost ?? 0).toBe(0);
    expect(got.length).toBe(100);
    for (let i = 0; i < 3; i++) {
      const { exporter: _a, outcome: _b, ...want } = recs[i]!;
      const { exporter: _c, outcome: _d, ...have } = got[i]!;
      expect(have).toEqual(want);
    }
  });
});
