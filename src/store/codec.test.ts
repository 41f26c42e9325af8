import { describe, expect, it } from 'vitest';
import { Baselines, HostModel } from '../detect/model.js';
import { fromJson, modelFromBytes, modelToBytes, slotsFromBytes, slotsToBytes, toJson } from './codec.js';

// Round trips of the state encodings (ours). Float32 fields hold float32 values already, so they
// come back bit for bit; IEEE 754 binary32/64 little-endian as Buffer writes them (Node docs).
describe('codec', () => {
  it('JSON keeps NaN and infinities', () => {
    const x = { a: NaN, b: [Infinity, -Infinity, 1.5], c: { $num: 'no' }, d: -0.25 };
    const back = fromJson<typeof x>(toJson(x));
    expect(back.a).toBeNaN();
    expect(back.b).toEqual([Infinity, -Infinity, 1.5]);
    expect(back.c).toEqual({ $num: 'no' });
    expect(back.d).toBe(-0.25);
  });

  it('a host model comes back field for field', () => {
    const bl = new Baselines(60_000);
    const m = new HostModel(7, bl);
    expect(modelFromBytes(7, bl, modelToBytes(m))).toEqual(m); // fresh: NaN times, no CUSUM or surge state
    Object.assign(m, { activeWindows: 321, lastActiveStart: 1.7e12, firstActiveStart: 1.6e12, trwLog: -1.25, trwDecided: -1 });
    m.cusum = Float64Array.from([0.1, 2, 3.5, 0, 0, 40, 1e-9, 7]);
    m.surge = {
      peak: Float32Array.from([1, 2, 3, 4, 5, 6, 7, 8.5]), run: Uint16Array.from([0, 1, 2, 3, 0, 0, 0, 65535]),
      runMax: Float32Array.from([9, 8, 7, 6, 5, 4, 3, 2]), last: Float32Array.from([0.5, -1, 3, 0, 0, 0, 0, 12]), lastStart: 1.7e12 - 60_000,
    };
    expect(modelFromBytes(7, bl, modelToBytes(m))).toEqual(m);
    expect(modelFromBytes(7, bl, modelToBytes(m).subarray(1))).toBeNull();
  });

  it('knows every HostModel field (a new field must be added to the codec, or it is lost at restart)', () => {
    const m = new HostModel(0, new Baselines(60_000));
    expect(Object.keys(m).sort()).toEqual(['activeWindows', 'baselines', 'cusum', 'firstActiveStart', 'hostId', 'lastActiveStart', 'surge', 'trwDecided', 'trwLog']);
  });

  it('a host\'s baseline slots come back with the same bands', () => {
    const a = new Baselines(60_000);
    const values = new Float64Array(27);
    const none = new Uint8Array(27);
    for (let w = 0; w < 100; w++) {
      values.fill(w % 7);
      a.learn(3, values, w * 60_000, none);
    }
    const b = new Baselines(60_000);
    expect(slotsFromBytes(b.counts, 3, slotsToBytes(a.counts, 3))).toBe(true);
    expect(slotsFromBytes(b.plain, 3, slotsToBytes(a.plain, 3))).toBe(true);
    for (const f of [0, 2, 14]) expect(b.band(3, f, 100 * 60_000, 3.1)).toEqual(a.band(3, f, 100 * 60_000, 3.1));
    expect(slotsFromBytes(b.counts, 3, slotsToBytes(a.counts, 3).subarray(2))).toBe(false);
    // the one-buffer encoding is the per-slot one laid end to end: a 4-octet length, then the slot
    for (const bank of [a.counts, a.plain]) {
      const parts = Array.from({ length: bank.features }, (_, f) => {
        const s = bank.slotToBytes(bank.slotOf(3, f));
        const len = Buffer.alloc(4);
        len.writeUInt32LE(s.length);
        return Buffer.concat([len, s]);
      });
      expect(slotsToBytes(bank, 3).equals(Buffer.concat(parts))).toBe(true);
    }
  });
});
