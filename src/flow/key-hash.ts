/**
 * Direction-free hash of a flow's two endpoints: each (address, port) end is mixed on its own and the
 * two are added, so both directions of a flow land on the same slot without ordering the ends first.
 * Mixer: MurmurHash3 fmix32 (METHODS.md 4.6).
 */
export function fmix32(h: number): number {
  h ^= h >>> 16;
  h = Math.imul(h, 0x85ebca6b);
  h ^= h >>> 13;
  h = Math.imul(h, 0xc2b2ae35);
  return (h ^ (h >>> 16)) >>> 0;
}

/** One multiply-xorshift round per end is enough: the sum of the ends goes through fmix32 after. */
function end4(addr: number, port: number): number {
  const h = Math.imul(addr ^ Math.imul(port + 1, 0x9e3779b1), 0x85ebca6b);
  return h ^ (h >>> 15);
}

function end6(w: Uint32Array, port: number): number {
  let h = Math.imul(w[0]! ^ 0x27d4eb2f, 0xcc9e2d51);
  h = Math.imul(h ^ w[1]!, 0x1b873593);
  h = Math.imul(h ^ w[2]!, 0xcc9e2d51);
  h = Math.imul(h ^ w[3]!, 0x1b873593);
  h = Math.imul(h ^ Math.imul(port + 1, 0x9e3779b1), 0x85ebca6b);
  return h ^ (h >>> 15);
}

/** Hash of a flow key; `a`/`b` are four-word addresses (IPv4 in word 0). */
export function flowHash(family: number, proto: number, a: Uint32Array, aPort: number, b: Uint32Array, bPort: number): number {
  const ends = family === 4 ? (end4(a[0]!, aPort) + end4(b[0]!, bPort)) | 0 : (end6(a, aPort) + end6(b, bPort)) | 0;
  return fmix32(ends ^ (proto << 8) ^ family);
}
