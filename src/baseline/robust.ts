/**
 * Robust location and scale: median, MAD scaled to a normal sigma, robust z-score (METHODS.md 7.3).
 * MAD scale 1.4826 = 1 / Phi^-1(3/4) makes the MAD consistent for normal data (as R's stats::mad
 * documents). For windows of history, not for per-packet use: median copies and sorts its input.
 */

/** 1 / Phi^-1(0.75), rounded as R's stats::mad uses it. */
export const MAD_SCALE = 1.4826;

/** Median of the values (mean of the two middle ones for even length); NaN when empty. */
export function median(xs: ArrayLike<number>): number {
  const n = xs.length;
  if (n === 0) return NaN;
  const s = Float64Array.from(xs).sort();
  const mid = n >>> 1;
  return n % 2 === 1 ? s[mid]! : (s[mid - 1]! + s[mid]!) / 2;
}

/** Median absolute deviation from the median, times `scale` (1.4826 by default, as R's mad). */
export function mad(xs: ArrayLike<number>, scale = MAD_SCALE): number {
  const m = median(xs);
  const dev = new Float64Array(xs.length);
  for (let i = 0; i < xs.length; i++) dev[i] = Math.abs(xs[i]! - m);
  return scale * median(dev);
}

/**
 * (x - median) / (1.4826 * MAD) of the sample. A constant sample has MAD 0: the scale then falls back to
 * `minSpread` (METHODS.md 7.3 suggests max(MAD, 1 count, 1 % of the median); pass what fits the units).
 */
export function robustZ(x: number, sample: ArrayLike<number>, minSpread = 0): number {
  const m = median(sample);
  const s = Math.max(mad(sample), minSpread);
  if (s === 0) return x === m ? 0 : x > m ? Infinity : -Infinity;
  return (x - m) / s;
}
