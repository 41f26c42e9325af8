import type { Band } from './model.js';

/**
 * The score scale shared by every detector (docs/alert-schema.md): robust standard deviations of the
 * observed value above the expected one, in the baseline's transform space (log1p for counts).
 */
export function scoreCount(x: number, b: Band): number {
  return (Math.log1p(Math.max(0, x)) - Math.log1p(Math.max(0, b.expected))) / Math.max(b.spread, 1e-6);
}

/**
 * Population prior for hosts without a ready baseline: a count whose typical value is `expected`,
 * with a spread of `spread` in log1p space (a factor of about e^spread), band edge at z.
 */
export function priorBand(expected: number, spread: number, z: number): Band {
  const t = Math.log1p(expected);
  return {
    expected,
    low: Math.max(0, Math.expm1(t - z * spread)),
    high: Math.expm1(t + z * spread),
    spread,
    ready: false,
    seasonal: false,
  };
}
