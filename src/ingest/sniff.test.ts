import { describe, expect, it } from 'vitest';
import { packedFormat, sniffFormat } from './sniff.js';

const b = (...x: number[]) => Uint8Array.from(x);

describe('format sniffing from the first bytes', () => {
  it('capture magics (METHODS.md 1.1, 1.2: pcap µs/ns in both byte orders, pcapng SHB)', () => {
    expect(sniffFormat(b(0xd4, 0xc3, 0xb2, 0xa1))).toBe('pcap');
    expect(sniffFormat(b(0xa1, 0xb2, 0x3c, 0x4d))).toBe('pcap');
    expect(sniffFormat(b(0x0a, 0x0d, 0x0d, 0x0a))).toBe('pcapng');
  });
  it('flow exports by version word: IPFIX 10 with length >= 16 (RFC 7011 section 3.1), v9 (RFC 3954 section 5.1), v5 with 1..30 records (from memory)', () => {
    expect(sniffFormat(b(0, 10, 0, 16))).toBe('ipfix');
    expect(sniffFormat(b(0, 10, 0, 15))).toBe(null);
    expect(sniffFormat(b(0, 9, 0, 1))).toBe('netflow9');
    expect(sniffFormat(b(0, 5, 0, 30))).toBe('netflow5');
    expect(sniffFormat(b(0, 5, 0, 0))).toBe(null);
    expect(sniffFormat(b(0, 5, 0, 31))).toBe(null);
  });
  it('text flow logs by their first character; never the export-capture format', () => {
    expect(sniffFormat(new TextEncoder().encode('\ufeff{"src":1}'))).toBe('jsonl');
    expect(sniffFormat(new TextEncoder().encode('start,src,dst'))).toBe('csv');
    expect(sniffFormat(b(1, 2, 3, 4))).toBe(null);
  });
  it('packed inputs are named in the error (zstd RFC 8878 section 3.1.1 frame magic; xz, bzip2, zip, 7z from memory)', () => {
    expect(packedFormat(b(0x28, 0xb5, 0x2f, 0xfd, 0))).toBe('zstd-compressed');
    expect(packedFormat(b(0xfd, 0x37, 0x7a, 0x58, 0x5a, 0x00))).toBe('xz-compressed');
    expect(packedFormat(b(0x50, 0x4b, 0x03, 0x04))).toBe('a zip archive');
    expect(packedFormat(b(0x42, 0x5a, 0x68, 0x39, 0x31, 0x41, 0x59, 0x26, 0x53, 0x59))).toBe('bzip2-compressed');
    expect(packedFormat(new TextEncoder().encode('BZhost,dst,start'))).toBe(null);
    expect(packedFormat(b(0xd4, 0xc3, 0xb2, 0xa1))).toBe(null);
  });
});
