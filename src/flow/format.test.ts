import { describe, expect, it } from 'vitest';
import { FLOW_CSV_HEADER, flowToCsv, flowToJson } from './format.js';
import { FLOW_FIELDS, type FlowRecord } from './record.js';

const rec: FlowRecord = {
  start: 1700000040100.5, end: 1700000041000, proto: 6, src: '10.60.1.5', dst: '2001:db8::1', sport: 40000, dport: 443,
  pkts: 3, bytes: 180, rpkts: 2, rbytes: 1100, flags: 0x1b, rflags: 0x12, outcome: 'established', exporter: 'a "b",c.pcap',
};

describe('flow record formatting', () => {
  it('JSON line: keys in FLOW_FIELDS order, vlan omitted when absent, strings escaped (RFC 8259)', () => {
    const line = flowToJson(rec);
    const parsed = JSON.parse(line) as Record<string, unknown>;
    expect(Object.keys(parsed)).toEqual(FLOW_FIELDS.filter((k) => k !== 'vlan'));
    expect(parsed).toEqual(rec);
    // property order of the input object does not matter
    const shuffled = { vlan: 7, ...rec } as FlowRecord;
    expect(Object.keys(JSON.parse(flowToJson(shuffled)))).toEqual([...FLOW_FIELDS]);
    expect(line).toBe(JSON.stringify(Object.fromEntries(FLOW_FIELDS.filter((k) => k in rec).map((k) => [k, rec[k]]))));
  });

  it('CSV: header is the field names; vlan empty when absent; RFC 4180 quoting', () => {
    expect(FLOW_CSV_HEADER).toBe(FLOW_FIELDS.join(','));
    expect(flowToCsv(rec)).toBe('1700000040100.5,1700000041000,6,10.60.1.5,2001:db8::1,40000,443,3,180,2,1100,27,18,established,"a ""b"",c.pcap",');
    expect(flowToCsv({ ...rec, exporter: 'x.pcap', vlan: 12 }).endsWith(',established,x.pcap,12')).toBe(true);
  });
});

describe('num: shortest round-trip digits', () => {
  it('matches String(x) for timestamps, counters and awkward values', async () => {
    const { num } = await import('./format.js');
    const xs = [0, 1, 7, 1700000040100.7, 1700000040100.07, 1700000040100.007, 1700000040100.789, 1700000040000.1 + 0.2,
      1700000040123.456789, 0.1, 0.001, 123.45, 1e15, 2 ** 53, 1.5e-7, -3, -0.5, 4294967295, 8999999999999.999];
    for (let i = 0; i < 2000; i++) xs.push(1.7e12 + i * 0.001, 1.7e12 + (i * 1234567) / 1e6, (i * 7919) % 100000);
    for (const x of xs) expect(num(x), String(x)).toBe(String(x));
    expect([num(NaN), num(Infinity)]).toEqual(['null', 'null']);
  });
});
