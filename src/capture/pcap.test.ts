import { describe, expect, it } from 'vitest';
import { CaptureParser } from './parser.js';
import { buildPcap, frame, parseInChunks, type PcapPacket } from './testing.js';

const pkts: PcapPacket[] = [
  { sec: 1_700_000_000, sub: 123_456, data: frame(60, 1) },
  { sec: 1_700_000_001, sub: 999_999, data: frame(61, 2), origLen: 1514 },
  { sec: 1_700_000_002, sub: 0, data: frame(0, 3) },
];

describe('classic pcap', () => {
  it('file header is 24 octets and record header 16 (METHODS 10 row 1, draft-ietf-opsawg-pcap)', () => {
    const file = buildPcap({}, [pkts[0]!]);
    expect(file.length).toBe(24 + 16 + 60);
    const { packets, summary } = parseInChunks(file, file.length);
    expect(packets[0]!.fileOff).toBe(24);
    expect(summary.format).toBe('pcap');
    expect(summary.inputBytes).toBe(100);
  });

  it('magics: LE microsecond starts D4 C3 B2 A1, BE nanosecond A1 B2 3C 4D (METHODS 10 row 2, draft)', () => {
    expect(Array.from(buildPcap({ le: true }, []).subarray(0, 4))).toEqual([0xd4, 0xc3, 0xb2, 0xa1]);
    expect(Array.from(buildPcap({ le: false, nano: true }, []).subarray(0, 4))).toEqual([0xa1, 0xb2, 0x3c, 0x4d]);
  });

  for (const le of [true, false]) {
    for (const nano of [false, true]) {
      it(`reads ${le ? 'little' : 'big'}-endian ${nano ? 'nanosecond' : 'microsecond'} files`, () => {
        const input = pkts.map((p) => ({ ...p, sub: nano ? p.sub * 1000 + 7 : p.sub }));
        const { packets, summary } = parseInChunks(buildPcap({ le, nano, linkType: 101 }, input), 1 << 20);
        expect(summary.problems).toEqual([]);
        expect(packets.map((p) => [p.sec, p.ns, p.capLen, p.origLen, p.linkType])).toEqual([
          [1_700_000_000, nano ? 123_456_007 : 123_456_000, 60, 60, 101],
          [1_700_000_001, nano ? 999_999_007 : 999_999_000, 61, 1514, 101],
          [1_700_000_002, 7 * Number(nano), 0, 0, 101],
        ]);
        expect(packets[1]!.data).toEqual(Array.from(frame(61, 2)));
        expect(summary.packets).toBe(3);
        expect(summary.capturedBytes).toBe(121);
      });
    }
  }

  it('LinkType word 0x24000001 is link type 1 with the FCS bits masked (METHODS 10 row 3, draft figure)', () => {
    const { packets } = parseInChunks(buildPcap({ linkType: 0x24000001 }, [pkts[0]!]), 4096);
    expect(packets[0]!.linkType).toBe(1);
  });

  it('hands a packet that lies inside the chunk over without copying', () => {
    const file = buildPcap({}, pkts);
    const seen: Array<[Uint8Array, number]> = [];
    const parser = new CaptureParser('x.pcap', (buf, off) => seen.push([buf, off]));
    parser.push(file);
    parser.end();
    expect(seen.map(([b, o]) => [b === file, o])).toEqual([[true, 40], [true, 40 + 60 + 16], [true, 40 + 60 + 16 + 61 + 16]]);
  });

  it('raises an original length below the captured length to it (draft: a reader MAY)', () => {
    const { packets } = parseInChunks(buildPcap({}, [{ sec: 1, sub: 0, data: frame(40), origLen: 10 }]), 4096);
    expect(packets[0]!.origLen).toBe(40);
  });

  it('rejects a major version other than 2 at offset 0', () => {
    const { packets, summary } = parseInChunks(buildPcap({ major: 3 }, pkts), 4096);
    expect(packets).toEqual([]);
    expect(summary.stopped).toBe(true);
    expect(summary.problems[0]).toMatchObject({ reason: 'bad-version', offset: 0, fatal: true, file: 'test.cap' });
  });

  it('stops at a record longer than snaplen, keeping the packets before it', () => {
    const file = buildPcap({ snaplen: 64 }, [pkts[0]!, { sec: 2, sub: 0, data: frame(65) }, pkts[0]!]);
    const { packets, summary } = parseInChunks(file, 7);
    expect(packets.length).toBe(1);
    expect(summary.stopped).toBe(true);
    expect(summary.problems).toEqual([expect.objectContaining({ reason: 'record-too-long', offset: 100, fatal: true })]);
    expect(summary.problemCounts).toEqual({ 'record-too-long': 1 });
  });

  it('stops at a captured length above the 256 KiB cap even with snaplen 0 (METHODS 1.1 [P])', () => {
    const file = buildPcap({ snaplen: 0 }, [{ sec: 1, sub: 0, data: frame(8), capLen: 262_145 }]);
    const { summary } = parseInChunks(file, 4096);
    expect(summary.problems.map((p) => [p.reason, p.offset, p.fatal])).toEqual([
      ['bad-snaplen', 16, false],
      ['record-too-long', 24, true],
    ]);
  });

  it('accepts a captured length of exactly 256 KiB', () => {
    const file = buildPcap({ snaplen: 262_144 }, [{ sec: 1, sub: 0, data: frame(262_144) }]);
    const { packets, summary } = parseInChunks(file, 65_536);
    expect(summary.problems).toEqual([]);
    expect(packets[0]!.capLen).toBe(262_144);
  });

  it('stops at a sub-second field out of range (METHODS 1.1 [P])', () => {
    const us = parseInChunks(buildPcap({}, [{ sec: 1, sub: 1_000_000, data: frame(4) }]), 4096);
    expect(us.summary.problems[0]).toMatchObject({ reason: 'bad-timestamp', offset: 24, fatal: true });
    const ns = parseInChunks(buildPcap({ nano: true }, [{ sec: 1, sub: 999_999_999, data: frame(4) }, { sec: 1, sub: 1e9, data: frame(4) }]), 4096);
    expect(ns.packets.length).toBe(1);
    expect(ns.summary.problems[0]).toMatchObject({ reason: 'bad-timestamp', offset: 44, fatal: true });
  });

  it('a file cut inside a record keeps what came before and reports non-fatal truncation', () => {
    const file = buildPcap({}, pkts);
    for (const cut of [24 + 16 + 60 + 5, 24 + 16 + 60 + 16 + 30]) {
      const { packets, summary } = parseInChunks(file.subarray(0, cut), 13);
      expect(packets.length).toBe(1);
      expect(summary.truncated).toBe(true);
      expect(summary.stopped).toBe(false);
      expect(summary.problems).toEqual([expect.objectContaining({ reason: 'truncated', offset: 100, fatal: false })]);
    }
    const header = parseInChunks(file.subarray(0, 10), 3);
    expect(header.summary.problems).toEqual([expect.objectContaining({ reason: 'truncated', offset: 0 })]);
  });

  it('unknown magic is fatal at offset 0; empty input is reported', () => {
    const bad = parseInChunks(new Uint8Array([1, 2, 3, 4, 5, 6, 7, 8]), 1);
    expect(bad.summary.problems).toEqual([expect.objectContaining({ reason: 'not-a-capture', offset: 0, fatal: true })]);
    expect(bad.summary.format).toBe('unknown');
    const empty = parseInChunks(new Uint8Array(0), 1);
    expect(empty.summary.problems).toEqual([expect.objectContaining({ reason: 'empty-input', offset: 0 })]);
  });

  it('returns false from push once stopped and stays stopped', () => {
    const parser = new CaptureParser('x', () => {});
    expect(parser.push(new Uint8Array([0, 0, 0, 0]))).toBe(false);
    expect(parser.push(buildPcap({}, pkts))).toBe(false);
    expect(parser.end().packets).toBe(0);
  });
});
