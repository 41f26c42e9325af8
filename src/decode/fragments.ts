/**
 * Remembers the ports of recent first fragments so later fragments of the same datagram can be tied to
 * their flow. Keyed by (family, src, dst, id, proto) as METHODS.md 2.2 describes; a fixed direct-mapped
 * table that overwrites on collision, so memory stays bounded under fragment floods.
 */
const WORDS = 10; // [family << 8 | proto, id, src0..3, dst0..3]

export class FragmentTable {
  private readonly mask: number;
  private readonly keys: Uint32Array;
  private readonly ports: Uint32Array;
  private readonly used: Uint8Array;

  constructor(slots = 4096) {
    let n = 1;
    while (n < slots) n <<= 1;
    this.mask = n - 1;
    this.keys = new Uint32Array(n * WORDS);
    this.ports = new Uint32Array(n);
    this.used = new Uint8Array(n);
  }

  /** Records the ports of a first fragment. */
  remember(family: number, proto: number, id: number, src: Uint32Array, dst: Uint32Array, sport: number, dport: number): void {
    const slot = this.slot(family, proto, id, src, dst);
    const k = slot * WORDS;
    const keys = this.keys;
    keys[k] = (family << 8) | proto;
    keys[k + 1] = id;
    for (let i = 0; i < 4; i++) { keys[k + 2 + i] = src[i]!; keys[k + 6 + i] = dst[i]!; }
    this.ports[slot] = ((sport << 16) | dport) >>> 0;
    this.used[slot] = 1;
  }

  /** Ports (sport << 16 | dport) of the datagram's first fragment, or -1 when not known. */
  lookup(family: number, proto: number, id: number, src: Uint32Array, dst: Uint32Array): number {
    const slot = this.slot(family, proto, id, src, dst);
    if (this.used[slot] === 0) return -1;
    const k = slot * WORDS;
    const keys = this.keys;
    if (keys[k] !== ((family << 8) | proto) || keys[k + 1] !== id) return -1;
    for (let i = 0; i < 4; i++) if (keys[k + 2 + i] !== src[i] || keys[k + 6 + i] !== dst[i]) return -1;
    return this.ports[slot]!;
  }

  private slot(family: number, proto: number, id: number, src: Uint32Array, dst: Uint32Array): number {
    let h = Math.imul(id ^ (family << 8) ^ proto, 0x9e3779b1);
    for (let i = 0; i < 4; i++) {
      h = Math.imul(h ^ src[i]!, 0x85ebca6b);
      h = Math.imul(h ^ dst[i]!, 0xc2b2ae35);
      h ^= h >>> 15;
    }
    return (h ^ (h >>> 16)) & this.mask;
  }
}
