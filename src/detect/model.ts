import { FeatureBaseline } from '../baseline/model.js';
import { F, FEATURE_COUNT } from '../window/features.js';

/** Features with a per-host baseline; the rest are only tested against floors. */
export const BASELINED = [
  F.flows_out, F.pkts_out, F.bytes_out, F.flows_in, F.pkts_in, F.bytes_in,
  F.distinct_peers, F.distinct_peer_ports, F.max_ports_per_peer, F.max_peers_per_port,
  F.distinct_sources, F.failed_out, F.syn_only_in, F.entropy_dst_ports,
] as const;

const SLOT = new Int8Array(FEATURE_COUNT).fill(-1);
BASELINED.forEach((f, i) => { SLOT[f] = i; });

/** The band of one feature for one window, in the feature's own units. */
export interface Band {
  expected: number;
  low: number;
  high: number;
  /** Robust sigma in the baseline's transform space (log1p for counts): the score's unit. */
  spread: number;
  ready: boolean;
  seasonal: boolean;
}

/** Counts learn in log1p space (METHODS.md 7.3: tame skew); ratios and entropies as they are. */
function isCount(f: number): boolean {
  return f !== F.entropy_dst_ports && f !== F.failure_ratio;
}

/**
 * Everything tidewatch has learned about one host: a FeatureBaseline per baselined feature, created on
 * the host's first active window; plus TRW and CUSUM state kept by the detectors.
 */
export class HostModel {
  activeWindows = 0;
  lastActiveStart = Number.NaN;
  /** Threshold Random Walk: log likelihood ratio over first contacts (Jung et al. 2004). */
  trwLog = 0;
  trwDecided: 0 | 1 | -1 = 0;
  /** CUSUM state per traffic-shift feature: upper and lower sums. */
  cusum: Float64Array | null = null;
  private readonly baselines: FeatureBaseline[];

  constructor() {
    this.baselines = BASELINED.map((f) => new FeatureBaseline({ transform: isCount(f) ? 'log1p' : 'identity' }));
  }

  has(f: number): boolean {
    return SLOT[f]! >= 0;
  }

  band(f: number, tMs: number, z: number): Band | null {
    const i = SLOT[f]!;
    if (i < 0) return null;
    return this.baselines[i]!.band(tMs, z);
  }

  /** Learns this window's values; values flagged anomalous are learned clipped to the band edge. */
  learn(values: Float64Array, tMs: number, anomalous: Uint8Array): void {
    for (let i = 0; i < BASELINED.length; i++) {
      const f = BASELINED[i]!;
      const b = this.baselines[i]!;
      if (anomalous[f]) b.observeClipped(values[f]!, tMs);
      else b.observe(values[f]!, tMs);
    }
    this.activeWindows++;
    this.lastActiveStart = tMs;
  }

  toBytes(): Uint8Array[] {
    return this.baselines.map((b) => b.toBytes());
  }
}
