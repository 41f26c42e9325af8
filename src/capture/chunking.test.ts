import { describe, expect, it } from 'vitest';
import { buildPcap, frame, parseInChunks, PcapngBuilder } from './testing.js';

function pcapFile(le: boolean, nano: boolean): Uint8Array {
  const pkts = [];
  for (let i = 0; i < 40; i++) pkts.push({ sec: 1_700_000_000 + i, sub: i * 1013, data: frame((i * 37) % 1600, i) });
  pkts.push({ sec: 1_700_000_100, sub: 5, data: frame(70_000, 99) }); // larger than the initial carry
  return buildPcap({ le, nano, snaplen: 262_144 }, pkts);
}

function pcapngFile(): Uint8Array {
  const a = new PcapngBuilder().shb({ le: true }).idb({ linkType: 1 }).idb({ linkType: 101, tsresol: 9 });
  for (let i = 0; i < 30; i++) a.epb(i % 2, BigInt(1_700_000_000_000_000 + i * 1_000_003), frame((i * 53) % 1500, i));
  a.block(4, frame(40)).block(0x0a, frame(20_000)).isb(0, { ifdrop: 3n }).epb(0, 1n, frame(100_000, 7));
  const b = new PcapngBuilder().shb({ le: false }).idb({ linkType: 113, snaplen: 96 });
  for (let i = 0; i < 10; i++) b.spb(frame(200, i));
  b.pb(0, 123_456_789n, frame(96, 3));
  return new Uint8Array([...a.bytes(), ...b.bytes()]);
}

describe('chunk-boundary independence', () => {
  const files: Array<[string, Uint8Array]> = [
    ['pcap LE us', pcapFile(true, false)],
    ['pcap BE ns', pcapFile(false, true)],
    ['pcapng two sections', pcapngFile()],
  ];
  for (const [name, file] of files) {
    it(`${name}: chunks of 1, 7, 4096 and whole give identical packets and summaries`, () => {
      const whole = parseInChunks(file, file.length);
      expect(whole.summary.problems).toEqual([]);
      expect(whole.packets.length).toBeGreaterThan(10);
      for (const size of [1, 7, 4096]) {
        const r = parseInChunks(file, size);
        expect(r.packets).toEqual(whole.packets);
        expect(r.summary).toEqual(whole.summary);
      }
    });
  }
});
