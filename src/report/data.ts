import type { Alert } from '../alert/alert.js';

/**
 * Everything a report shows, whatever filled it: a re-run of the pipeline over the input with the
 * alerts of an earlier run (collect.ts), or a state store holding alerts and series. The renderer
 * (html.ts) reads only this.
 */
export interface ReportData {
  title: string;
  /** When the report was made, epoch ms (shown; fixed in tests). */
  generatedMs: number;
  windowMs: number;
  /** Event-time span of the input, epoch ms. */
  spanStartMs: number;
  spanEndMs: number;
  inputs: ReportInput[];
  /** Distinct addresses seen (inside and outside). */
  addresses: number;
  /** Hosts active in at least one window, and how many of them are inside (--internal). */
  activeHosts: number;
  insideHosts: number;
  flows: number;
  /** One alert per episode: its latest state. */
  alerts: Alert[];
  /** The charted series, one per (host, feature, stretch of time). */
  series: FeatureSeries[];
  /** Caveats for the reader (alerts not reproduced, unreadable inputs, ...). */
  notes: string[];
}

export interface ReportInput {
  file: string;
  format: string;
  /** Packets for captures, records for flow exports. */
  units: number;
  unitName: 'packets' | 'records';
  bytes: number;
  flows: number;
}

/**
 * One feature of one host over consecutive windows [startMs + i * stepMs, + stepMs). `observed` is 0
 * in windows where the host was silent; the band arrays are NaN where no band is known.
 */
export interface FeatureSeries {
  host: string;
  feature: string;
  startMs: number;
  stepMs: number;
  observed: Float64Array;
  expected: Float64Array;
  low: Float64Array;
  high: Float64Array;
  /**
   * `baseline`: the host's learned band throughout; `rule`: a detector's fixed floor or population
   * prior throughout (no per-host baseline for the feature, or not yet ready), from its findings and
   * the alert; `mixed`: learned where ready, the rule's elsewhere.
   */
  bandFrom: 'baseline' | 'rule' | 'mixed';
  /** Window count per plotted point after downsampling (1 = every window). */
  pointWindows: number;
}

/** Episode spans in epoch ms, parsed once from alert start/end. */
export interface EpisodeSpan { alert: Alert; startMs: number; endMs: number }
