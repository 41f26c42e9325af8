/**
 * pcapng timestamps: a 64-bit tick count in if_tsresol units (METHODS.md 1.2). Ticks above 2^53 cannot
 * pass through a float, so the fast path divides exactly in 16-bit pieces; resolutions whose units per
 * second do not fit that path (10^-v with v > 9, 2^-v with v > 32) take a BigInt path, which is rare.
 */

/** Default if_tsresol when the option is absent: 10^-6 s. */
export const DEFAULT_TSRESOL = 6;

/** Units per second for the exact fast path, or 0 when `tsresol` needs the BigInt path. */
export function fastUnitsPerSecond(tsresol: number): number {
  const v = tsresol & 0x7f;
  if (tsresol & 0x80) return v <= 32 ? 2 ** v : 0;
  return v <= 9 ? 10 ** v : 0;
}

/**
 * Nanoseconds per unit for the fast path. For 10^-v it is the integer 10^(9-v); for 2^-v it is
 * 1953125 * 2^(9-v), so `frac * nsPerUnit` is exact (frac * 1953125 < 2^53 for v <= 32) before the floor.
 */
export function nsPerUnit(units: number): number {
  return 1e9 / units;
}

/** Reused output of a conversion: integer seconds and nanoseconds within the second. */
export interface Instant {
  sec: number;
  ns: number;
}

/**
 * ticks = hi * 2^32 + lo, in units of 1/units s (units <= 2^32). Writes floor(ticks / units) + offsetSec and
 * the remainder as nanoseconds. Each step keeps x < units * 2^16 <= 2^48, so `%` and the division are exact.
 */
export function ticksToInstant(hi: number, lo: number, units: number, nsPer: number, offsetSec: number, out: Instant): void {
  if (hi < 0x200000) {
    // ticks < 2^53 (microsecond clocks until the year 2255): one exact `%` and one exact division.
    const ticks = hi * 4294967296 + lo;
    const rem = ticks % units;
    out.sec = (ticks - rem) / units + offsetSec;
    out.ns = Math.floor(rem * nsPer);
    return;
  }
  let x = hi >>> 16;
  let r = x % units;
  let q = (x - r) / units;
  x = r * 65536 + (hi & 0xffff);
  r = x % units;
  q = q * 65536 + (x - r) / units;
  x = r * 65536 + (lo >>> 16);
  r = x % units;
  q = q * 65536 + (x - r) / units;
  x = r * 65536 + (lo & 0xffff);
  r = x % units;
  q = q * 65536 + (x - r) / units;
  out.sec = q + offsetSec;
  out.ns = Math.floor(r * nsPer);
}

/** Exact conversion for any if_tsresol (allocates BigInts; only for resolutions the fast path cannot take). */
export function ticksToInstantSlow(hi: number, lo: number, tsresol: number, offsetSec: number, out: Instant): void {
  const v = BigInt(tsresol & 0x7f);
  const units = tsresol & 0x80 ? 1n << v : 10n ** v;
  const ticks = (BigInt(hi) << 32n) | BigInt(lo);
  out.sec = Number(ticks / units) + offsetSec;
  out.ns = Number(((ticks % units) * 1_000_000_000n) / units);
}
