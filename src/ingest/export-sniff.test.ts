import { readFileSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { isExportDatagram, looksLikeExportTraffic } from './export-sniff.js';

// Captures from test/golden (scapy-made): one of export datagrams from three exporters, the rest not.
const golden = join(import.meta.dirname, '..', '..', 'test', 'golden');

describe('recognising a capture of flow-export traffic from its first packets (ours)', () => {
  it('the capture of IPFIX, NetFlow v9 and v5 datagrams is export traffic', () => {
    expect(looksLikeExportTraffic(readFileSync(join(golden, 'flowlog', 'exports_mixed.pcap')))).toBe(true);
  });
  it('no capture golden of ordinary traffic is', () => {
    const dir = join(golden, 'captures');
    for (const f of readdirSync(dir).filter((n) => /\.pcap(ng)?$/.test(n))) {
      expect([f, looksLikeExportTraffic(readFileSync(join(dir, f)))]).toEqual([f, false]);
    }
  });
  it('a head cut anywhere never throws', () => {
    const b = readFileSync(join(golden, 'flowlog', 'exports_mixed.pcap'));
    for (let n = 0; n < b.length; n += 37) expect(typeof looksLikeExportTraffic(b.subarray(0, n))).toBe('boolean');
  });
  it('on other ports a message must fill its datagram exactly (IPFIX length, RFC 7011 section 3.1; v9 FlowSets, RFC 3954 section 5)', () => {
    // a UDP header (8 octets, its length field counting itself) followed by `payload`
    const dgram = (dport: number, payload: number[]) => Uint8Array.from([0x9c, 0x40, dport >> 8, dport & 255, 0, 8 + payload.length, 0, 0, ...payload]);
    const ipfix = [0, 10, 0, 20, ...new Array(12).fill(0), 0, 2, 0, 4];
    const at = (d: Uint8Array) => isExportDatagram(d, 0, d.length, 40000, (d[2]! << 8) | d[3]!);
    expect(at(dgram(20013, ipfix))).toBe(true);
    expect(at(dgram(20013, [...ipfix, 0]))).toBe(false); // one octet more than the message says
    expect(at(dgram(4739, [...ipfix, 0]))).toBe(true); // a collector port: the version word is enough
    const v9 = [0, 9, 0, 1, ...new Array(16).fill(0), 0, 0, 0, 8, 1, 0, 0, 1];
    expect(at(dgram(20013, v9))).toBe(true);
    expect(at(dgram(20013, [...v9.slice(0, 20), 0, 7, 0, 8, 0, 0, 0, 0]))).toBe(false); // FlowSet id 7 is reserved
    expect(at(dgram(53, [0, 9, 0, 0, 1, 2, 3]))).toBe(false);
  });
});
