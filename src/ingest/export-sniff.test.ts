import { readFileSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { looksLikeExportTraffic } from './export-sniff.js';

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
});
