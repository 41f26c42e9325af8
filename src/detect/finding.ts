/**
 * Finding: what a detector says about one host in one closed window. Findings flow into alert/, which
 * groups them into episodes. Detectors never build alerts themselves.
 */
export const ALERT_KINDS = [
  'volume-surge', 'fan-in-flood', 'horizontal-scan', 'vertical-scan', 'unusual-destination', 'traffic-shift',
] as const;
export type AlertKind = (typeof ALERT_KINDS)[number];

export type Role = 'source' | 'target';

export interface PeerCount { peer: string; count: number }
export interface PortCount { port: number; count: number }
export interface SampleFlow {
  start: string; proto: number; src: string; dst: string; sport: number; dport: number;
  pkts: number; bytes: number; rpkts: number; rbytes: number; outcome: string;
}

/** Evidence carried into the alert's `evidence` object (bounded lengths). */
export interface Evidence {
  top_peers: PeerCount[];
  top_ports: PortCount[];
  sample_flows: SampleFlow[];
  flows: number;
  packets: number;
  bytes: number;
  /** Any further numeric facts a detector wants to show (failure ratio, TRW log ratio, ...). */
  [extra: string]: unknown;
}

export interface Finding {
  kind: AlertKind;
  host: string;
  role: Role;
  /** The window this finding is about, epoch ms, [start, end). */
  windowStart: number;
  windowEnd: number;
  feature: string;
  observed: number;
  expected: number;
  low: number;
  high: number;
  /**
   * Score scale (docs/alert-schema.md): robust standard deviations above the expected value,
   * (observed - expected) / spread, where spread is the baseline's robust sigma (or the population
   * prior's for floor rules). The band's edge sits at z(alpha).
   */
  score: number;
  evidence: Evidence;
  rule: string;
  /**
   * Internal, not part of the feed: false when an alpha-dependent gate of the detector failed, so the
   * finding may continue an open episode but not open one (detect/thresholds.ts).
   */
  openable?: boolean;
}
