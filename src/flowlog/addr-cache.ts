import { ipv4ToString, ipv6ToString } from '../util/addr.js';

const SLOTS = 4096; // power of two; direct-mapped

/**
 * Direct-mapped cache of address texts, so records from the same hosts reuse one string instead of
 * building it per record. A miss builds the string and replaces the slot.
 */
export class AddressTexts {
  private v4Keys = new Float64Array(SLOTS).fill(-1);
  private v4Text: string[] = new Array<string>(SLOTS).fill('');
  private v6Keys = new Uint8Array(SLOTS * 16);
  private v6Used = new Uint8Array(SLOTS);
  private v6Text: string[] = new Array<string>(SLOTS).fill('');

  v4(a: number): string {
    const slot = (Math.imul(a, 0x9e3779b1) >>> 20) & (SLOTS - 1);
    if (this.v4Keys[slot] === a) return this.v4Text[slot]!;
    const t = ipv4ToString(a);
    this.v4Keys[slot] = a;
    this.v4Text[slot] = t;
    return t;
  }

  v6(b: Uint8Array, off: number): string {
    let h = 0x811c9dc5;
    for (let i = 0; i < 16; i++) h = Math.imul(h ^ b[off + i]!, 0x01000193);
    const slot = (h >>> 0) & (SLOTS - 1);
    const k = slot * 16;
    if (this.v6Used[slot] === 1) {
      let same = true;
      for (let i = 0; i < 16 && same; i++) if (this.v6Keys[k + i] !== b[off + i]) same = false;
      if (same) return this.v6Text[slot]!;
    }
    const t = ipv6ToString(b, off);
    this.v6Keys.set(b.subarray(off, off + 16), k);
    this.v6Used[slot] = 1;
    this.v6Text[slot] = t;
    return t;
  }
}
