import type { HostAcc } from '../window/host-acc.js';
import type { Thresholds, Floors } from './thresholds.js';
import type { HostModel } from './model.js';

/** What every detector sees for one host in one closed window. Detectors read it, never mutate it. */
export interface HostContext {
  host: string;
  hostId: number;
  inside: boolean;
  windowStart: number;
  windowEnd: number;
  acc: HostAcc;
  /** Feature values (indices in window/features.ts F). */
  values: Float64Array;
  model: HostModel;
  thresholds: Thresholds;
  floors: Floors;
  /** Windows closed so far in this run (or restored from state): peer novelty needs history. */
  runWindows: number;
  name: (id: number) => string;
}
