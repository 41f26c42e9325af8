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
    // made flat once (a template literal of 13 or more characters is a rope): the output encoders
    // read the text character by character, record after record
    const s = Buffer.from(ipv4ToString(a), 'latin1').toString('latin1');
    this.keys[i] = a;
    this.texts[i] = s;
    return s;
  }
}
