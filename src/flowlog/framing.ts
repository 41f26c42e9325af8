import type { ByteSource } from '../ingest/source.js';

/**
 * Consumes whole units (messages, packets) from `w[0..n)`; `base` is w[0]'s input offset. Returns how
 * many bytes it used; the rest is kept and offered again with the next chunk. On the final call
 * (`eof`) unused bytes are a truncated tail.
 */
export type FrameStep = (w: Uint8Array, n: number, base: number, eof: boolean) => number;

/**
 * Drives `step` over a byte source. Only the unconsumed tail (at most one unit, < 64 KiB for IPFIX and
 * v9) is copied between chunks; the rest is decoded in place. Returns the length of a truncated tail.
 */
export async function driveFrames(src: ByteSource, step: FrameStep): Promise<number> {
  let carry = new Uint8Array(0);
  let carryLen = 0;
  let base = 0;
  let joined = new Uint8Array(0);
  for (;;) {
    const chunk = await src.read();
    if (chunk === null) break;
    let w: Uint8Array = chunk;
    let n = chunk.length;
    if (carryLen > 0) {
      n = carryLen + chunk.length;
      if (joined.length < n) joined = new Uint8Array(Math.max(n, joined.length * 2));
      joined.set(carry.subarray(0, carryLen), 0);
      joined.set(chunk, carryLen);
      w = joined;
    }
    const used = step(w, n, base, false);
    const rest = n - used;
    if (carry.length < rest) carry = new Uint8Array(Math.max(rest, carry.length * 2));
    carry.set(w.subarray(used, n), 0);
    carryLen = rest;
    base += used;
  }
  if (carryLen === 0) return 0;
  const used = step(carry, carryLen, base, true);
  return carryLen - used;
}

/** Finds the next position in `w[from..n)` where `ok(w, p)` holds; `n` minus `keep` when none. */
export function resync(w: Uint8Array, from: number, n: number, keep: number, ok: (w: Uint8Array, p: number) => boolean): number {
  for (let p = from; p + keep <= n; p++) if (ok(w, p)) return p;
  return Math.max(from, n - keep + 1);
}
