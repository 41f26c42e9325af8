import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { CaptureParser } from './parser.js';
import { buildPcap, frame, parseInChunks, PcapngBuilder } from './testing.js';

function seeds(): Uint8Array[] {
  const pkts = [0, 1, 60, 61, 300].map((n, i) => ({ sec: 1_700_000_000 + i, sub: i * 999, data: frame(n, i) }));
  const ng = (le: boolean) => new PcapngBuilder().shb({ le }).idb({ tsresol: 9, snaplen: 512 }).idb({ linkType: 101, tsoffset: 5n })
    .epb(0, 10n ** 18n, frame(60)).block(4, frame(24)).epb(1, 77n, frame(61)).isb(1, { ifdrop: 4n, osdrop: 1n })
    .pb(0, 1n, frame(30)).block(0x0bad, frame(13)).bytes();
  const spb = new PcapngBuilder().shb({ le: false }).idb({ snaplen: 40 }).epb(0, 5n, frame(40)).spb(frame(60)).spb(frame(20)).bytes();
  return [
    buildPcap({ le: true }, pkts),
    buildPcap({ le: false }, pkts),
    buildPcap({ le: true, nano: true, linkType: 0x24000001 }, pkts),
    buildPcap({ le: false, nano: true }, pkts),
    ng(true),
    ng(false),
    new Uint8Array([...ng(true), ...spb]),
  ];
}

const SEEDS = seeds();

/** A seed file, cut somewhere, with a few bytes flipped; plus chunk sizes to feed it in. */
const damagedInput = fc.record({
  seed: fc.integer({ min: 0, max: SEEDS.length - 1 }),
  cut: fc.double({ min: 0, max: 1, noNaN: true }),
  flips: fc.array(fc.record({ at: fc.double({ min: 0, max: 1, noNaN: true }), xor: fc.integer({ min: 1, max: 255 }) }), { maxLength: 6 }),
  chunks: fc.array(fc.integer({ min: 1, max: 300 }), { minLength: 1, maxLength: 8 }),
  truncate: fc.boolean(),
});

function damage(d: fc.RecordValue<typeof damagedInput extends fc.Arbitrary<infer T> ? T : never>): Uint8Array {
  const base = SEEDS[d.seed]!;
  const len = d.truncate ? Math.floor(d.cut * base.length) : base.length;
  const file = Uint8Array.from(base.subarray(0, len));
  for (const f of d.flips) if (len > 0) file[Math.min(len - 1, Math.floor(f.at * len))]! ^= f.xor;
  return file;
}

function cycle(sizes: number[]): () => number {
  let i = 0;
  return () => sizes[i++ % sizes.length]!;
}

describe('fast-check: damaged captures', () => {
  it('never throw, report offsets within the file, deliver packets inside their buffer, and do not depend on chunking', () => {
    fc.assert(
      fc.property(damagedInput, (d) => {
        const file = damage(d);
        const whole = parseInChunks(file, file.length);
        const parts = parseInChunks(file, cycle(d.chunks));
        for (const r of [whole, parts]) {
          for (const p of r.problems) {
            expect(p.offset).toBeGreaterThanOrEqual(0);
            expect(p.offset).toBeLessThanOrEqual(file.length);
            expect(p.file).toBe('test.cap');
          }
          expect(r.summary.packets).toBe(r.packets.length);
          for (const p of r.packets) {
            expect(p.fileOff + p.capLen).toBeLessThanOrEqual(file.length);
            expect(Number.isInteger(p.sec) && Number.isInteger(p.ns) && p.ns >= 0 && p.ns < 1e9).toBe(true);
          }
        }
        expect(parts.packets).toEqual(whole.packets);
        expect(parts.summary).toEqual(whole.summary);
      }),
      { numRuns: 400 },
    );
  });

  it('never throw on arbitrary bytes behind a pcap or pcapng magic, and keep packet views inside the buffer', () => {
    const magics = [[0xd4, 0xc3, 0xb2, 0xa1], [0xa1, 0xb2, 0x3c, 0x4d], [0x0a, 0x0d, 0x0d, 0x0a]];
    fc.assert(
      fc.property(fc.integer({ min: 0, max: 2 }), fc.uint8Array({ maxLength: 400 }), fc.integer({ min: 1, max: 64 }), (m, tail, chunk) => {
        const file = new Uint8Array([...magics[m]!, ...tail]);
        const parser = new CaptureParser('r', (buf, off, cap) => {
          expect(off + cap).toBeLessThanOrEqual(buf.length);
        });
        for (let i = 0; i < file.length; i += chunk) parser.push(file.subarray(i, i + chunk));
        const s = parser.end();
        for (const p of s.problems) expect(p.offset >= 0 && p.offset <= file.length).toBe(true);
      }),
      { numRuns: 500 },
    );
  });
});
