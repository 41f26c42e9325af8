import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { parseInChunks, type SeenPacket } from './testing.js';

const GOLDEN = fileURLToPath(new URL('../../test/golden/reader/', import.meta.url));

/** The parts of pcap-parser 0.2.1 (npm, CommonJS, no types) the test uses. */
interface PcapParserPacket {
  header: { timestampSeconds: number; timestampMicroseconds: number; capturedLength: number; originalLength: number };
  data: Buffer;
}
interface PcapParserEmitter {
  on(ev: 'packet', f: (p: PcapParserPacket) => void): this;
  on(ev: 'error', f: (e: Error) => void): this;
  on(ev: 'end', f: () => void): this;
}
const pcapParser = createRequire(import.meta.url)('pcap-parser') as { parse(path: string): PcapParserEmitter };

interface Reference { packets: Array<[number, number, number, number]>; error?: string }

function referenceRead(path: string): Promise<Reference> {
  return new Promise((resolve) => {
    const packets: Array<[number, number, number, number]> = [];
    let error: string | undefined;
    const p = pcapParser.parse(path);
    p.on('packet', (pk) => packets.push([pk.header.timestampSeconds, pk.header.timestampMicroseconds, pk.header.capturedLength, sha(pk.data)]));
    p.on('error', (e) => { error = e.message; });
    p.on('end', () => resolve(error === undefined ? { packets } : { packets, error }));
  });
}

function sha(b: Uint8Array): number {
  // First 48 bits of SHA-1, enough to tell captured byte strings apart in a test.
  return parseInt(createHash('sha1').update(b).digest('hex').slice(0, 12), 16);
}

function ours(file: string): Array<[number, number, number, number]> {
  const { packets, summary } = parseInChunks(readFileSync(GOLDEN + file), 1000);
  expect(summary.problems).toEqual([]);
  return packets.map((p: SeenPacket) => [p.sec, p.ns / 1000, p.capLen, sha(Uint8Array.from(p.data))]);
}

// Differential test against the reference library pcap-parser 0.2.1 (npm). It reads classic pcap with
// microsecond timestamps in both byte orders (it picks the order from the magic); it rejects the
// nanosecond magics and pcapng, so those files are compared with scapy instead (golden.test.ts).
describe('differential: ours vs pcap-parser (npm reference library) on classic microsecond pcap', () => {
  const files = ['scapy_le_us.pcap', 'scapy_be_us.pcap', 'scapy_sll_snap96.pcap', 'tcpdump_le_us.pcap'];
  for (const f of files) {
    it(`${f}: same packet count, timestamps (sec, us), captured lengths and bytes`, async () => {
      const ref = await referenceRead(GOLDEN + f);
      expect(ref.error).toBeUndefined();
      expect(ref.packets.length).toBeGreaterThan(0);
      expect(ours(f)).toEqual(ref.packets);
    });
  }

  it('pcap-parser cannot read nanosecond pcap (the skip above is its limit, not ours)', async () => {
    const ref = await referenceRead(GOLDEN + 'scapy_le_ns.pcap');
    expect(ref.error).toMatch(/unknown magic number/);
  });
});
