import type { Severity } from './alert.js';

/** Severities from least to most urgent. */
export const SEVERITIES: readonly Severity[] = ['low', 'medium', 'high', 'critical'];

/**
 * The one score-to-severity mapping (docs/alert-schema.md). The score is in robust standard deviations
 * above the expected value; the band edge sits near z(alpha) (about 3.1 at the default alpha 0.001),
 * so every alert starts at `low`.
 */
export const SEVERITY_LIMITS = { medium: 6, high: 12, critical: 25 } as const;

export function severityForScore(score: number): Severity {
  if (!(score >= SEVERITY_LIMITS.medium)) return 'low'; // NaN lands here too
  if (score < SEVERITY_LIMITS.high) return 'medium';
  if (score < SEVERITY_LIMITS.critical) return 'high';
  return 'critical';
}

/** One step up (for an episode an analyst labelled malicious); `critical` stays `critical`. */
export function raiseSeverity(s: Severity): Severity {
  return SEVERITIES[Math.min(SEVERITIES.indexOf(s) + 1, SEVERITIES.length - 1)]!;
}
