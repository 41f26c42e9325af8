import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { parseInChunks } from './testing.js';

const GOLDEN = fileURLToPath(new URL('../../test/golden/reader/', import.meta.url));

// Goldens written by test/golden/make_reader_goldens.py: files from scapy, dpkt and tcpdump writers, and
// NAME.expect.json holding what scapy's RawPcapReader / RawPcapNgReader see, timestamps by exact integer
// arithmetic on the raw fields. Source: scapy 2.5 (Debian python3-scapy).
describe('golden captures vs scapy raw readers', () => {
  const files = [
    'scapy_le_us.pcap', 'scapy_be_us.pcap', 'scapy_le_ns.pcap', 'scapy_be_ns.pcap', 'scapy_sll_snap96.pcap',
    'tcpdump_le_us.pcap', 'tcpdump_ns.pcap', 'scapy_le.pcapng', 'scapy_be.pcapng', 'dpkt_ns.pcapng',
  ];
  for (const f of files) {
    it(`${f}: sec, ns, captured and original length, link type, bytes`, () => {
      const expected = JSON.parse(readFileSync(GOLDEN + f + '.expect.json', 'utf8')) as { packets: unknown[] };
      const { packets, summary } = parseInChunks(readFileSync(GOLDEN + f), 333);
      expect(summary.problems).toEqual([]);
      expect(summary.format).toBe(f.endsWith('.pcapng') ? 'pcapng' : 'pcap');
      const got = packets.map((p) => [p.sec, p.ns, p.capLen, p.origLen, p.linkType, createHash('sha1').update(Uint8Array.from(p.data)).digest('hex')]);
      expect(got).toEqual(expected.packets);
    });
  }
});
