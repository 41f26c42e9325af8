/** Unsigned reads in a capture file's own byte order (pcap and pcapng headers follow the writer's order). */

export function u16(b: Uint8Array, o: number, le: boolean): number {
  return le ? b[o]! | (b[o + 1]! << 8) : (b[o]! << 8) | b[o + 1]!;
}

export function u32(b: Uint8Array, o: number, le: boolean): number {
  return (le
    ? b[o]! | (b[o + 1]! << 8) | (b[o + 2]! << 16) | (b[o + 3]! << 24)
    : (b[o]! << 24) | (b[o + 1]! << 16) | (b[o + 2]! << 8) | b[o + 3]!) >>> 0;
}

/** First four octets as one big-endian word: how magic numbers are compared. */
export function magicAt(b: Uint8Array, o: number): number {
  return u32(b, o, false);
}
