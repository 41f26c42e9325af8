import { describe, expect, it } from 'vitest';
import { CaptureParser } from './parser.js';
import { frame, parseInChunks, PcapngBuilder } from './testing.js';

const F60 = frame(60, 1);

function onlyPacket(file: Uint8Array) {
  const r = parseInChunks(file, 4096);
  expect(r.summary.problems).toEqual([]);
  expect(r.packets.length).toBe(1);
  return r.packets[0]!;
}

describe('pcapng framing', () => {
  it('SHB starts 0A 0D 0D 0A; LE byte-order magic octets are 4D 3C 2B 1A (METHODS 10 row 4, pcapng draft)', () => {
    const b = new PcapngBuilder().shb({ le: true }).bytes();
    expect(Array.from(b.subarray(0, 4))).toEqual([0x0a, 0x0d, 0x0d, 0x0a]);
    expect(Array.from(b.subarray(8, 12))).toEqual([0x4d, 0x3c, 0x2b, 0x1a]);
  });

  it('minimal SHB 28, minimal IDB 20, body-less block 12 octets, all accepted (METHODS 10 row 5, pcapng draft)', () => {
    expect(new PcapngBuilder().shb().bytes().length).toBe(28);
    expect(new PcapngBuilder().idb().bytes().length).toBe(20);
    expect(new PcapngBuilder().block(0x99, new Uint8Array(0)).bytes().length).toBe(12);
    const file = new PcapngBuilder().shb().idb().block(0x99, new Uint8Array(0)).epb(0, 1n, F60).bytes();
    expect(onlyPacket(file).capLen).toBe(60);
  });

  it('EPB of a 60-octet frame is 92 octets, of a 61-octet frame 96 (METHODS 10 row 6, pcapng draft [C])', () => {
    expect(new PcapngBuilder().epb(0, 0n, frame(60)).bytes().length).toBe(92);
    expect(new PcapngBuilder().epb(0, 0n, frame(61)).bytes().length).toBe(96);
  });

  for (const le of [true, false]) {
    it(`reads a ${le ? 'little' : 'big'}-endian section: link type, lengths, data, offsets`, () => {
      const file = new PcapngBuilder().shb({ le }).idb({ linkType: 113 }).epb(0, 5_000_001n, F60, 1500).bytes();
      const p = onlyPacket(file);
      expect([p.sec, p.ns, p.capLen, p.origLen, p.linkType, p.fileOff]).toEqual([5, 1000, 60, 1500, 113, 48]);
      expect(p.data).toEqual(Array.from(F60));
    });
  }

  it('hands EPB data over without a copy when the block lies in the chunk', () => {
    const file = new PcapngBuilder().shb().idb().epb(0, 0n, F60).bytes();
    const seen: Array<[boolean, number]> = [];
    const parser = new CaptureParser('x', (buf, off) => seen.push([buf === file, off]));
    parser.push(file);
    parser.end();
    expect(seen).toEqual([[true, 48 + 28]]);
  });
});

describe('pcapng timestamps', () => {
  it('1e9 ticks with no if_tsresol are 1000 s (METHODS 10 row 7: default 10^-6, pcapng draft)', () => {
    const p = onlyPacket(new PcapngBuilder().shb().idb().epb(0, 1_000_000_000n, F60).bytes());
    expect([p.sec, p.ns]).toEqual([1000, 0]);
  });

  it('1e9 ticks with if_tsresol 9 are 1 s; with 0x8A 976562.5 s (METHODS 10 row 8, pcapng draft)', () => {
    const nine = onlyPacket(new PcapngBuilder().shb().idb({ tsresol: 9 }).epb(0, 1_000_000_000n, F60).bytes());
    expect([nine.sec, nine.ns]).toEqual([1, 0]);
    const bin = onlyPacket(new PcapngBuilder().shb().idb({ tsresol: 0x8a }).epb(0, 1_000_000_000n, F60).bytes());
    expect([bin.sec, bin.ns]).toEqual([976_562, 500_000_000]);
  });

  it('tick counts above 2^53 convert exactly (checked against BigInt arithmetic)', () => {
    const cases: Array<[number, bigint]> = [
      [9, 0xffff_ffff_ffff_ffffn],
      [9, 1_700_000_000_123_456_789n],
      [6, 0xffff_ffff_ffff_ffffn],
      [0x80 | 32, 0xfedc_ba98_7654_3210n],
      [0x80 | 20, (1n << 60n) + 12345n],
      [3, 9_007_199_254_740_993n],
      [6, (1n << 53n) - 1n], // last tick count on the single-division path
      [9, 1n << 53n],
      [0x80 | 10, (1n << 53n) + 1023n],
    ];
    for (const [tsresol, ticks] of cases) {
      const units = tsresol & 0x80 ? 1n << BigInt(tsresol & 0x7f) : 10n ** BigInt(tsresol);
      const p = onlyPacket(new PcapngBuilder().shb().idb({ tsresol }).epb(0, ticks, F60).bytes());
      // Exact reference: integer division in BigInt.
      expect(BigInt(p.sec)).toBe(ticks / units);
      expect(BigInt(p.ns)).toBe(((ticks % units) * 1_000_000_000n) / units);
    }
  });

  it('unusual resolutions (10^-12, 2^-40) take the exact slow path', () => {
    const pico = onlyPacket(new PcapngBuilder().shb().idb({ tsresol: 12 }).epb(0, 1_700_000_000_123_456_789_012n & 0xffff_ffff_ffff_ffffn, F60).bytes());
    const t = 1_700_000_000_123_456_789_012n & 0xffff_ffff_ffff_ffffn;
    expect([BigInt(pico.sec), BigInt(pico.ns)]).toEqual([t / 10n ** 12n, ((t % 10n ** 12n) * 1_000_000_000n) / 10n ** 12n]);
    const bin = onlyPacket(new PcapngBuilder().shb().idb({ tsresol: 0x80 | 40 }).epb(0, (3n << 40n) + (1n << 39n), F60).bytes());
    expect([bin.sec, bin.ns]).toEqual([3, 500_000_000]);
  });

  it('if_tsoffset adds signed seconds (pcapng draft, option 14)', () => {
    const plus = onlyPacket(new PcapngBuilder().shb({ le: false }).idb({ tsoffset: 1_600_000_000n }).epb(0, 2_500_000n, F60).bytes());
    expect([plus.sec, plus.ns]).toEqual([1_600_000_002, 500_000_000]);
    const minus = onlyPacket(new PcapngBuilder().shb().idb({ tsoffset: -2n }).epb(0, 5_000_000n, F60).bytes());
    expect(minus.sec).toBe(3);
  });
});

describe('pcapng blocks', () => {
  // pcapng draft, IDB: per-interface LinkType and SnapLen, 0 = no limit (METHODS 1.2 [V]).
  it('each interface has its own link type and snaplen; snaplen 0 means no limit', () => {
    const file = new PcapngBuilder().shb().idb({ linkType: 1, snaplen: 0 }).idb({ linkType: 101, snaplen: 100 })
      .epb(1, 1n, frame(100)).epb(0, 2n, frame(3000)).bytes();
    const { packets, summary } = parseInChunks(file, 4096);
    expect(summary.problems).toEqual([]);
    expect(packets.map((p) => [p.linkType, p.capLen])).toEqual([[101, 100], [1, 3000]]);
  });

  it('a captured length above the interface snaplen is fatal at the block offset', () => {
    const file = new PcapngBuilder().shb().idb({ snaplen: 50 }).epb(0, 1n, F60).bytes();
    const { summary } = parseInChunks(file, 4096);
    expect(summary.problems).toEqual([expect.objectContaining({ reason: 'record-too-long', offset: 48, fatal: true })]);
  });

  // pcapng draft, sections: byte order and interface IDs are per section (METHODS 1.2 [V]).
  it('several sections, each with its own byte order and interface list', () => {
    const file = new Uint8Array([
      ...new PcapngBuilder().shb({ le: true }).idb({ linkType: 1 }).idb({ linkType: 113 }).epb(1, 1_000_000n, F60).bytes(),
      ...new PcapngBuilder().shb({ le: false }).idb({ linkType: 101, tsresol: 9 }).epb(0, 7n, F60).epb(1, 8n, F60).bytes(),
    ]);
    const { packets, summary } = parseInChunks(file, 4096);
    expect(packets.map((p) => [p.linkType, p.sec, p.ns])).toEqual([[113, 1, 0], [101, 0, 7]]);
    // Interface IDs restart per section: ID 1 does not exist in the second one.
    expect(summary.problems).toEqual([expect.objectContaining({ reason: 'unknown-interface', fatal: false })]);
    // IDB with if_tsresol: 20 + option 8 + opt_endofopt 4 = 32 octets.
    expect(summary.problems[0]!.offset).toBe(28 + 20 + 20 + 92 + 28 + 32 + 92);
  });

  it('an EPB naming an unknown interface is reported and skipped; reading goes on', () => {
    const file = new PcapngBuilder().shb().idb().epb(3, 1n, F60).epb(0, 2n, F60).bytes();
    const { packets, summary } = parseInChunks(file, 4096);
    expect(packets.length).toBe(1);
    expect(summary.problemCounts).toEqual({ 'unknown-interface': 1 });
    expect(summary.problems[0]).toMatchObject({ offset: 48, fatal: false });
  });

  // pcapng draft, SPB (METHODS 1.2 [V]); the synthetic time and the untimed flag are ours (METHODS 1.2 [P]).
  it('SPB: interface 0, captured = min(original, snaplen), time = last seen, input flagged untimed', () => {
    const file = new PcapngBuilder().shb().idb({ snaplen: 40, linkType: 101 }).epb(0, 3_000_007n, frame(40), 200).spb(frame(40), 100).bytes();
    const { packets, summary } = parseInChunks(file, 4096);
    expect(summary.problems).toEqual([]);
    expect(summary.untimed).toBe(true);
    expect(packets.map((p) => [p.sec, p.ns, p.capLen, p.origLen, p.linkType])).toEqual([[3, 7000, 40, 200, 101], [3, 7000, 40, 100, 101]]);
  });

  it('SPB is skipped with a problem unless the section has exactly one interface', () => {
    const file = new PcapngBuilder().shb().idb().idb().spb(frame(20)).bytes();
    const { packets, summary } = parseInChunks(file, 4096);
    expect(packets).toEqual([]);
    expect(summary.problemCounts).toEqual({ 'spb-interface-count': 1 });
    expect(summary.untimed).toBe(false);
  });

  // Packet Block layout (16-bit interface ID, 16-bit drops count) from memory of the pcapng draft's appendix [M].
  it('accepts the obsolete Packet Block (type 2)', () => {
    const p = onlyPacket(new PcapngBuilder().shb().idb({ linkType: 101 }).idb({ linkType: 1 }).pb(1, 2_000_000n, F60, 70).bytes());
    expect([p.linkType, p.sec, p.capLen, p.origLen]).toEqual([1, 2, 60, 70]);
  });

  // pcapng draft, ISB options 5 and 7 (METHODS 1.2 [V]); that the counters run from capture start is from memory [M].
  it('ISB isb_ifdrop + isb_osdrop go into droppedByCapture; counters are cumulative per interface', () => {
    const file = new PcapngBuilder().shb().idb().idb()
      .isb(0, { ifdrop: 5n }).isb(0, { ifdrop: 7n, osdrop: 1n }).isb(1, { osdrop: 2n }).bytes();
    const { summary } = parseInChunks(file, 4096);
    expect(summary.problems).toEqual([]);
    expect(summary.droppedByCapture).toBe(7 + 1 + 2);
  });

  // pcapng draft, general block structure: unknown blocks are skipped by their length (METHODS 1.2 [V]).
  it('NRB, DSB, custom, local and unknown blocks are skipped by their length', () => {
    const file = new PcapngBuilder().shb().block(4, new Uint8Array(16)).idb().block(0x0a, frame(33))
      .block(0x00000bad, frame(9)).block(0x40000bad, frame(1)).block(0x80001234, frame(5)).block(0x77, new Uint8Array(0))
      .epb(0, 1n, F60).bytes();
    expect(onlyPacket(file).capLen).toBe(60);
  });

  it('a large skipped block is streamed past without growing the carry buffer', () => {
    const file = new PcapngBuilder().shb().idb().block(0x0a, frame(3 << 20)).epb(0, 1n, F60).bytes();
    const packets: number[] = [];
    const parser = new CaptureParser('x', (_b, _o, cap) => packets.push(cap));
    for (let i = 0; i < file.length; i += 4096) parser.push(file.subarray(i, i + 4096));
    const s = parser.end();
    expect(s.problems).toEqual([]);
    expect(packets).toEqual([60]);
    expect((parser as unknown as { carry: Uint8Array }).carry.length).toBe(64 * 1024);
  });

  // pcapng draft, SHB: a section with another major version is not read (METHODS 1.2 [V]).
  it('a section with an unsupported major version is skipped; the next section is read', () => {
    const file = new Uint8Array([
      ...new PcapngBuilder().shb({ major: 2 }).idb().epb(0, 1n, F60).bytes(),
      ...new PcapngBuilder().shb().idb().epb(0, 2_000_000n, F60).bytes(),
    ]);
    const { packets, summary } = parseInChunks(file, 4096);
    expect(packets.map((p) => p.sec)).toEqual([2]);
    expect(summary.problems).toEqual([expect.objectContaining({ reason: 'unsupported-section-version', offset: 0, fatal: false })]);
  });
});
