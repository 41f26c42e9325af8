import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { ingestExportCapture } from './capture-ingest.js';
import { ingestIpfix, ingestNetflowV5, ingestNetflowV9 } from './file-ingest.js';
import { IpfixDecoder } from './ipfix.js';
import { NetflowV9Decoder } from './netflow9.js';
import { memorySource } from './testing.js';
import { DEFAULT_INGEST } from '../ingest/types.js';

// Property (fast-check, common practice): no input makes a decoder throw; problems are values.
const golden = (f: string) => new Uint8Array(readFileSync(join(import.meta.dirname, '..', '..', 'test', 'golden', 'flowlog', f)));
const ipfixSeed = golden('ipfix_mixed.ipfix');
const v9Seed = golden('netflow9_mixed.nf9');
const captureSeed = golden('exports_mixed.pcap');
const v5Seed = golden('netflow5_mixed.nf5');

/** The seed with some bytes overwritten and maybe cut short. */
const mutated = (seed: Uint8Array) => fc.record({
  edits: fc.array(fc.tuple(fc.nat(seed.length - 1), fc.integer({ min: 0, max: 255 })), { maxLength: 12 }),
  cut: fc.nat(seed.length),
}).map(({ edits, cut }) => {
  const b = seed.slice(0, Math.max(cut, 1));
  for (const [i, v] of edits) if (i < b.length) b[i] = v;
  return b;
});

describe('fuzzing the flow-export decoders (fast-check)', () => {
  it('IPFIX: random bytes and mutated golden messages never throw', () => {
    fc.assert(fc.property(fc.oneof(fc.uint8Array({ maxLength: 600 }), mutated(ipfixSeed)), (b) => {
      const dec = new IpfixDecoder('fuzz', 'fuzz', () => {});
      let p = 0;
      while (p < b.length) {
        const used = dec.decodeMessage(b, p, b.length - p, p);
        p += used > 0 ? used : b.length;
      }
      dec.finish();
    }), { numRuns: 1500 });
  });

  it('NetFlow v9: random bytes and mutated golden packets never throw', () => {
    fc.assert(fc.property(fc.oneof(fc.uint8Array({ maxLength: 600 }), mutated(v9Seed)), (b) => {
      const dec = new NetflowV9Decoder('fuzz', 'fuzz', () => {});
      dec.decodePacket(b, 0, b.length, 0);
      dec.finish();
    }), { numRuns: 1500 });
  });

  it('file readers resynchronise over mutated files without throwing', async () => {
    await fc.assert(fc.asyncProperty(mutated(ipfixSeed), mutated(v9Seed), mutated(v5Seed), fc.integer({ min: 1, max: 97 }), async (a, b, v5, chunk) => {
      const s1 = await ingestIpfix(memorySource(a, chunk), () => {}, DEFAULT_INGEST);
      const s2 = await ingestNetflowV9(memorySource(b, chunk), () => {}, DEFAULT_INGEST);
      const s3 = await ingestNetflowV5(memorySource(v5, chunk), () => {}, DEFAULT_INGEST);
      expect(s3.records).toBeLessThanOrEqual(5);
      expect(s1.records).toBeGreaterThanOrEqual(0);
      expect(s2.records).toBeGreaterThanOrEqual(0);
    }), { numRuns: 200 });
  });

  it('a mutated capture of export datagrams never throws; every problem offset lies inside the file', async () => {
    await fc.assert(fc.asyncProperty(mutated(captureSeed), fc.integer({ min: 1, max: 997 }), async (b, chunk) => {
      const offsets: number[] = [];
      const s = await ingestExportCapture(memorySource(b, chunk), () => {}, { ...DEFAULT_INGEST, onProblem: (p) => offsets.push(p.offset) });
      expect(s.packets).toBeLessThanOrEqual(18);
      for (const o of offsets) expect(o).toBeLessThan(b.length + 1);
    }), { numRuns: 300 });
  });
});

describe('fuzzing the flow-log readers (fast-check)', () => {
  const line = fc.oneof(
    fc.string({ maxLength: 80 }),
    fc.constantFrom('"', '""', '\r', ',', '{}', '[]', 'null', '{"src":"192.0.2.1","dst":"192.0.2.2","proto":"tcp","start":1}'),
  );
  it('CSV and JSON Lines: arbitrary lines never throw; every bad line is a problem with a line number', async () => {
    const { ingestCsv, ingestJsonl } = await import('./textlog.js');
    await fc.assert(fc.asyncProperty(fc.array(line, { maxLength: 20 }), fc.integer({ min: 1, max: 50 }), async (lines, chunk) => {
      const text = new TextEncoder().encode(['start,proto,src,dst', ...lines].join('\n'));
      for (const fn of [ingestCsv, ingestJsonl]) {
        const problems: number[] = [];
        const s = await fn(memorySource(text, chunk), () => {}, { ...DEFAULT_INGEST, onProblem: (p) => problems.push(p.line ?? -1) });
        expect(s.flows).toBeLessThanOrEqual(lines.length + 1);
        for (const l of problems) expect(l).toBeGreaterThanOrEqual(1);
      }
    }), { numRuns: 300 });
  });
});
