import { zForAlpha } from '../baseline/alpha.js';

/**
 * How `--alpha` (target false-alarm probability per host-window, DESIGN.md section 5) becomes every
 * threshold, in one place (docs/alert-schema.md, "alpha"):
 * - band tests: a host-window is tested on VOLUME_TESTS features at once, so each test gets
 *   alpha / VOLUME_TESTS (Bonferroni) and its band edge is z = Φ⁻¹(1 − alpha / VOLUME_TESTS);
 * - Threshold Random Walk: Wald's upper threshold η1 = β / alpha with β = 0.99 (Jung et al. 2004);
 * - CUSUM: decision interval h = 3 z (in robust standard deviations), reference k = 1.
 * A smaller alpha raises every threshold, so it never yields more findings. Absolute floors (minimum
 * effect sizes) do not depend on alpha.
 *
 * Opening and continuing differ: an episode OPENS when a score passes z (and the alpha-dependent
 * gates hold); once open it CONTINUES while scores stay above CONTINUE_Z with alpha-independent gates.
 * Continuation therefore never depends on alpha, which is what keeps "a smaller alpha never yields
 * more alerts" true episode by episode (an episode is a run of continuing windows that holds at least
 * one opening window; a higher opening bar can only drop runs, never split them).
 */
export const CONTINUE_Z = 2;
/** TRW's fixed continuation threshold: the paper's alpha = 0.01, beta = 0.99, eta1 = 99. */
export const TRW_LOG_CONTINUE = Math.log(99);
export const MAX_ALPHA = 0.1;
export const VOLUME_TESTS = 8;
export const TRW_BETA = 0.99;

export interface Thresholds {
  alpha: number;
  z: number;
  trwLogUpper: number;
  trwLogLower: number;
  cusumK: number;
  cusumH: number;
}

export function thresholdsFor(alpha: number): Thresholds {
  if (!(alpha > 0 && alpha <= MAX_ALPHA)) throw new RangeError(`alpha must be in (0, ${MAX_ALPHA}], got ${alpha}`);
  const z = zForAlpha(alpha / VOLUME_TESTS);
  return {
    alpha,
    z,
    // never below the continuation threshold, so whatever opens also continues
    trwLogUpper: Math.max(TRW_LOG_CONTINUE, Math.log(TRW_BETA / alpha)),
    trwLogLower: Math.log((1 - TRW_BETA) / (1 - alpha)),
    cusumK: 1,
    cusumH: 3 * z,
  };
}

/**
 * Minimum effect sizes and the population prior for hosts without a ready baseline (common practice,
 * no source: METHODS.md 7.7 "minimum effect size"). Rule files may override them (docs/rules.md;
 * src/rules/floors.ts says which detector reads each and checks its range).
 */
export interface Floors {
  /** volume-surge: per-window minimums and the minimum ratio to the expected value. */
  bytes: number;
  pkts: number;
  flows: number;
  surgeRatio: number;
  /** scans: failed first attempts and shape minimums in one window. */
  scanFailed: number;
  scanPorts: number;
  scanPeers: number;
  scanFailureRatio: number;
  /**
   * fan-in-flood: distinct sources and the share of unanswered or SYN-only flows; and the packets in
   * one window a flood carried mostly outside TCP needs (one-way UDP services, such as syslog, SNMP
   * traps or flow export, take many sources that are never answered, at low rates).
   */
  floodSources: number;
  floodFailedShare: number;
  floodPackets: number;
  /** unusual-destination: bytes sent to new, rare peers in one window. */
  newPeerBytes: number;
  /** Windows of run history before peer novelty means anything. */
  historyWindows: number;
}

export const DEFAULT_FLOORS: Floors = {
  bytes: 2_000_000,
  pkts: 10_000,
  flows: 150,
  surgeRatio: 4,
  scanFailed: 20,
  scanPorts: 20,
  scanPeers: 20,
  scanFailureRatio: 0.6,
  floodSources: 50,
  floodFailedShare: 0.6,
  floodPackets: 10_000,
  newPeerBytes: 1_000_000,
  historyWindows: 30,
};
