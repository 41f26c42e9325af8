import { BaselineBank, type Band } from '../baseline/model.js';
import { F, FEATURE_COUNT } from '../window/features.js';

export type { Band };

/** Features with a per-host baseline; the rest are only tested against floors. */
export const BASELINED = [
  F.flows_out, F.pkts_out, F.bytes_out, F.flows_in, F.pkts_in, F.bytes_in,
  F.nontcp_bytes_out, F.nontcp_bytes_in, F.distinct_peers, F.max_ports_per_peer, F.max_peers_per_port, F.distinct_sources,
] as const;
/** Baselined as they are (not log1p): ratios and entropies. */
export const BASELINED_PLAIN = [F.entropy_dst_ports] as const;

const SLOT = new Int8Array(FEATURE_COUNT).fill(-1);
const PLAIN = new Uint8Array(FEATURE_COUNT);
BASELINED.forEach((f, i) => { SLOT[f] = i; });
BASELINED_PLAIN.forEach((f, i) => { SLOT[f] = i; PLAIN[f] = 1; });

/**
 * Every host's baselines in two struct-of-arrays banks (src/baseline/model.ts): counts learn in log1p
 * space (METHODS.md 7.3: tame skew), entropies as they are. A host's slots are addressed by its
 * interned address id.
 */
export class Baselines {
  readonly counts: BaselineBank;
  readonly plain: BaselineBank;
  private readonly scratch: Band = { expected: 0, low: 0, high: 0, spread: 0, ready: false, seasonal: false };

  constructor(windowMs: number, seasonalOffsetMinutes = 0) {
    const seasonal = { offsetMinutes: seasonalOffsetMinutes };
    this.counts = new BaselineBank({ windowMs, features: BASELINED.length, transform: 'log1p', seasonal, silence: 'skip' });
    this.plain = new BaselineBank({ windowMs, features: BASELINED_PLAIN.length, transform: 'identity', seasonal, silence: 'skip', minSpread: 0.05, minRelSpread: 0 });
  }

  /** Windows starting in [fromMs, toMs) had no input at all: missing, not zero (both banks). */
  markMissing(fromMs: number, toMs: number): void {
    this.counts.markMissing(fromMs, toMs);
    this.plain.markMissing(fromMs, toMs);
  }

  /** The intervals of missing input both banks hold (the same in each), for the state store. */
  missingIntervals(): number[] {
    return this.counts.missingIntervals();
  }

  restoreMissingIntervals(pairs: readonly number[]): void {
    this.counts.restoreMissingIntervals(pairs);
    this.plain.restoreMissingIntervals(pairs);
  }

  /** The band of feature f for host at tMs, or null when f has no baseline. Reuses one object. */
  band(host: number, f: number, tMs: number, z: number): Band | null {
    const i = SLOT[f]!;
    if (i < 0) return null;
    const bank = PLAIN[f] ? this.plain : this.counts;
    return bank.band(bank.slotOf(host, i), tMs, z, this.scratch);
  }

  /** Learns one host-window; features flagged anomalous are learned clipped (alpha-independent edge). */
  learn(host: number, values: Float64Array, tMs: number, anomalous: Uint8Array): void {
    for (let i = 0; i < BASELINED.length; i++) {
      const f = BASELINED[i]!;
      this.counts.observe(this.counts.slotOf(host, i), values[f]!, tMs, anomalous[f] === 1);
    }
    for (let i = 0; i < BASELINED_PLAIN.length; i++) {
      const f = BASELINED_PLAIN[i]!;
      this.plain.observe(this.plain.slotOf(host, i), values[f]!, tMs, anomalous[f] === 1);
    }
  }
}

/**
 * Per volume feature (VOLUME order in volume-surge.ts), in log1p space: `peak` is the envelope of the
 * host's routine windows, a maximum decaying by PEAK_DECAY per window, fed by normal windows and by
 * short bursts once they end (so uploads a host makes a few times an hour become part of its normal);
 * `run` counts consecutive high windows and `runMax` is their largest value; `last` is the previous
 * window's score.
 */
export interface SurgeState {
  peak: Float32Array;
  run: Uint16Array;
  runMax: Float32Array;
  last: Float32Array;
  lastStart: number;
}

/** What the detectors keep per host beyond baselines: activity, TRW and CUSUM state. */
export class HostModel {
  activeWindows = 0;
  lastActiveStart = Number.NaN;
  /** Threshold Random Walk: log likelihood ratio over first attempts (Jung et al. 2004). */
  trwLog = 0;
  trwDecided: 0 | 1 | -1 = 0;
  /** CUSUM upper and lower sums per traffic-shift feature. */
  cusum: Float64Array | null = null;
  /** First window start seen: activity share = activeWindows / windows since. */
  firstActiveStart = Number.NaN;
  /** Volume-surge state per volume feature (detect/volume-surge.ts). */
  surge: SurgeState | null = null;

  constructor(readonly hostId: number, private readonly baselines: Baselines) {}

  band(f: number, tMs: number, z: number): Band | null {
    return this.baselines.band(this.hostId, f, tMs, z);
  }

  /** Share of windows since this host first appeared in which it was active. */
  activityShare(windowStart: number, windowMs: number): number {
    if (Number.isNaN(this.firstActiveStart)) return 0;
    const span = (windowStart - this.firstActiveStart) / windowMs + 1;
    return Math.min(1, this.activeWindows / span);
  }
}
