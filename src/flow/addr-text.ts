import { ipv4ToString } from '../util/addr.js';
import { fmix32 } from './key-hash.js';

/**
 * Direct-mapped cache of IPv4 address texts. Records are made per flow update, but the addresses come
 * from a few thousand hosts, so most texts are built once instead of once per record.
 */
export class Ipv4TextCache {
  private readonly mask: number;
  private readonly keys: Uint32Array;
  private readonly texts: string[];

  constructor(slots = 8192) {
    let n = 1;
    while (n < slots) n <<= 1;
    this.mask = n - 1;
    this.keys = new Uint32Array(n);
    this.texts = new Array<string>(n).fill('');
  }

  text(a: number): string {
    const i = fmix32(a) & this.mask;
    const t = this.texts[i]!;
    if (t !== '' && this.keys[i] === a) return t;
    const s = ipv4ToString(a);
    this.keys[i] = a;
    this.texts[i] = s;
    return s;
  }
}
