import { mkdtempSync, readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { PcapWriter } from './writer.js';

const require = createRequire(import.meta.url);
const pcapParser = require('pcap-parser') as {
  parse(path: string): { on(ev: string, fn: (x: any) => void): void };
};

const dir = mkdtempSync(join(tmpdir(), 'tw-writer-'));

function frame(n: number, fill: number): Uint8Array {
  return new Uint8Array(n).fill(fill);
}

describe('PcapWriter', () => {
  it('writes the little-endian microsecond header (METHODS.md section 10 rows 1-2)', () => {
    const p = join(dir, 'hdr.pcap');
    const w = new PcapWriter(p, { snaplen: 96, linkType: 101 });
    w.close();
    const b = readFileSync(p);
    // draft-ietf-opsawg-pcap: 24-octet header, magic D4 C3 B2 A1 on disk for little-endian µs
    expect(b.length).toBe(24);
    expect([...b.subarray(0, 4)]).toEqual([0xd4, 0xc3, 0xb2, 0xa1]);
    expect(b.readUInt16LE(4)).toBe(2);
    expect(b.readUInt16LE(6)).toBe(4);
    expect(b.readUInt32LE(16)).toBe(96);
    expect(b.readUInt32LE(20)).toBe(101);
  });

  it('uses the nanosecond magic 4D 3C B2 A1 (little-endian) when asked (draft-ietf-opsawg-pcap)', () => {
    const p = join(dir, 'ns.pcap');
    const w = new PcapWriter(p, { nanosecond: true });
    w.write(frame(60, 1), 0, 60, 60, 1_700_000_000, 123_456_789);
    w.close();
    const b = readFileSync(p);
    expect([...b.subarray(0, 4)]).toEqual([0x4d, 0x3c, 0xb2, 0xa1]);
    expect(b.readUInt32LE(28)).toBe(123_456_789);
  });

  it('truncates to snaplen, keeps the original length, and crosses chunk flushes intact', () => {
    const p = join(dir, 'snap.pcap');
    const w = new PcapWriter(p, { snaplen: 96, chunkBytes: 1024 });
    for (let i = 0; i < 100; i++) w.write(frame(1514, i), 0, 1514, 1514, 1_700_000_000 + i, i * 1000);
    w.write(frame(54, 7), 0, 54, 40, 1_700_000_200, 999_999_999);
    w.close();
    const b = readFileSync(p);
    expect(b.length).toBe(24 + 100 * (16 + 96) + 16 + 54);
    expect(w.fileBytes).toBe(b.length);
    let o = 24;
    for (let i = 0; i < 100; i++, o += 16 + 96) {
      expect(b.readUInt32LE(o + 8)).toBe(96);
      expect(b.readUInt32LE(o + 12)).toBe(1514);
      expect(b[o + 16]).toBe(i);
    }
    // original length below the captured one is raised to it (draft: readers MAY do the same)
    expect(b.readUInt32LE(o + 12)).toBe(54);
    expect(b.readUInt32LE(o + 4)).toBe(999_999);
  });

  it('is read back by pcap-parser (reference library) with the same headers', async () => {
    const p = join(dir, 'ref.pcap');
    const w = new PcapWriter(p, { snaplen: 128 });
    w.write(frame(200, 3), 0, 200, 200, 1_700_000_001, 5_000);
    w.write(frame(60, 4), 10, 50, 60, 1_700_000_002, 6_000);
    w.close();
    const seen: any[] = [];
    let global: any;
    await new Promise<void>((resolve, reject) => {
      const parser = pcapParser.parse(p);
      parser.on('globalHeader', (g) => { global = g; });
      parser.on('packet', (pk) => seen.push(pk));
      parser.on('end', () => resolve());
      parser.on('error', reject);
    });
    expect(global.linkLayerType).toBe(1);
    expect(global.snapshotLength).toBe(128);
    expect(seen.map((s) => [s.header.timestampSeconds, s.header.timestampMicroseconds, s.header.capturedLength, s.header.originalLength]))
      .toEqual([[1_700_000_001, 5, 128, 200], [1_700_000_002, 6, 50, 60]]);
  });
});
