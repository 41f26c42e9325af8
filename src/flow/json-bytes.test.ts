import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { flowToJson } from './format.js';
import { JsonLineEncoder } from './json-bytes.js';
import { OUTCOMES, type FlowRecord } from './record.js';

const record = fc.record({
  start: fc.oneof(fc.integer({ min: 1_600_000_000_000, max: 1_800_000_000_000 }).map((x) => x / 1000), fc.double({ noNaN: false })),
  end: fc.oneof(fc.integer({ min: 0, max: 2 ** 40 }).map((x) => x / 1000), fc.double()),
  proto: fc.integer({ min: 0, max: 255 }),
  src: fc.oneof(fc.constantFrom('10.60.1.5', '2001:db8::1', '0.0.0.0'), fc.string()),
  dst: fc.oneof(fc.constantFrom('198.51.100.7', 'ff02::1'), fc.string({ unit: 'grapheme' })),
  sport: fc.integer({ min: 0, max: 65535 }),
  dport: fc.integer({ min: 0, max: 65535 }),
  pkts: fc.nat(),
  bytes: fc.oneof(fc.nat(), fc.integer({ min: 0, max: 2 ** 53 - 1 })),
  rpkts: fc.nat(),
  rbytes: fc.nat(),
  flags: fc.integer({ min: 0, max: 255 }),
  rflags: fc.integer({ min: 0, max: 255 }),
  outcome: fc.constantFrom(...OUTCOMES),
  exporter: fc.oneof(fc.constantFrom('bench.pcap', 'stdin', '192.0.2.1:4739/7'), fc.string({ unit: 'grapheme', maxLength: 40 })),
  vlan: fc.option(fc.integer({ min: 0, max: 4095 }), { nil: undefined }),
}, { requiredKeys: ['start', 'end', 'proto', 'src', 'dst', 'sport', 'dport', 'pkts', 'bytes', 'rpkts', 'rbytes', 'flags', 'rflags', 'outcome', 'exporter'] });

describe('JsonLineEncoder', () => {
  it('writes exactly flowToJson(r) + newline for any record (fast-check)', () => {
    fc.assert(fc.property(fc.array(record as fc.Arbitrary<FlowRecord>, { maxLength: 20 }), (recs) => {
      const enc = new JsonLineEncoder(64); // tiny chunk: exercises growth
      for (const r of recs) enc.write(r);
      expect(enc.take().toString('utf8')).toBe(recs.map((r) => `${flowToJson(r)}\n`).join(''));
    }), { numRuns: 500 });
  });

  it('long strings grow the buffer instead of being cut', () => {
    const enc = new JsonLineEncoder(64);
    const r: FlowRecord = { start: 1, end: 2, proto: 6, src: 'a'.repeat(5000), dst: 'é'.repeat(3000), sport: 1, dport: 2, pkts: 1, bytes: 40, rpkts: 0, rbytes: 0, flags: 2, rflags: 0, outcome: 'unanswered', exporter: 'b'.repeat(7000) };
    enc.write(r);
    enc.write({ ...r, dst: 'c'.repeat(9000) });
    expect(enc.take().toString('utf8')).toBe(`${flowToJson(r)}\n${flowToJson({ ...r, dst: 'c'.repeat(9000) })}\n`);
  });

  it('take() hands over the bytes and starts empty', () => {
    const enc = new JsonLineEncoder();
    const r: FlowRecord = { start: 1.5, end: 2, proto: 17, src: '10.60.1.5', dst: '198.51.100.7', sport: 1, dport: 53, pkts: 1, bytes: 60, rpkts: 0, rbytes: 0, flags: 0, rflags: 0, outcome: 'unanswered', exporter: 'x.pcap' };
    enc.write(r);
    const first = enc.take();
    expect(JSON.parse(first.toString())).toEqual(r);
    expect(enc.length).toBe(0);
  });
});
