/** Big-endian field reads (network order, METHODS.md section 0); callers check bounds first. */
export function u16(b: Uint8Array, p: number): number {
  return (b[p]! << 8) | b[p + 1]!;
}

export function u32(b: Uint8Array, p: number): number {
  return ((b[p]! << 24) | (b[p + 1]! << 16) | (b[p + 2]! << 8) | b[p + 3]!) >>> 0;
}

/** Reads 16 address octets into four big-endian words. */
export function readV6(b: Uint8Array, p: number, out: Uint32Array): void {
  out[0] = u32(b, p);
  out[1] = u32(b, p + 4);
  out[2] = u32(b, p + 8);
  out[3] = u32(b, p + 12);
}

/** ::ffff:a.b.c.d (RFC 4291 section 2.5.5.2). */
export function isV4Mapped(w: Uint32Array): boolean {
  return w[0] === 0 && w[1] === 0 && w[2] === 0xffff;
}
