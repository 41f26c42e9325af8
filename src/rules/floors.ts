import type { AlertKind } from '../detect/finding.js';
import type { Floors } from '../detect/thresholds.js';

export type FloorName = keyof Floors;

interface FloorSpec {
  /** Counts are whole numbers; ratios and shares are real numbers. */
  type: 'count' | 'ratio' | 'share';
  /** The detectors that read this floor (a rule may set only the floors its detector reads). */
  readers: readonly AlertKind[];
}

const SCANS: readonly AlertKind[] = ['horizontal-scan', 'vertical-scan'];

/** Every floor of detect/thresholds.ts Floors, its type and who reads it (the detectors' sources). */
export const FLOOR_SPECS: Readonly<Record<FloorName, FloorSpec>> = {
  bytes: { type: 'count', readers: ['volume-surge'] },
  pkts: { type: 'count', readers: ['volume-surge'] },
  flows: { type: 'count', readers: ['volume-surge'] },
  surgeRatio: { type: 'ratio', readers: ['volume-surge'] },
  scanFailed: { type: 'count', readers: SCANS },
  scanFailureRatio: { type: 'share', readers: SCANS },
  scanPorts: { type: 'count', readers: ['vertical-scan'] },
  scanPeers: { type: 'count', readers: ['horizontal-scan'] },
  floodSources: { type: 'count', readers: ['fan-in-flood'] },
  floodFailedShare: { type: 'share', readers: ['fan-in-flood'] },
  floodPackets: { type: 'count', readers: ['fan-in-flood'] },
  newPeerBytes: { type: 'count', readers: ['unusual-destination'] },
  historyWindows: { type: 'count', readers: ['unusual-destination'] },
};

export function floorsReadBy(kind: AlertKind): FloorName[] {
  return (Object.keys(FLOOR_SPECS) as FloorName[]).filter((n) => FLOOR_SPECS[n].readers.includes(kind));
}

/** Why a value is out of range for a floor, or null when it is fine. */
export function floorRangeProblem(name: FloorName, v: number): string | null {
  switch (FLOOR_SPECS[name].type) {
    case 'count':
      if (!Number.isSafeInteger(v) || v < 0) return `${name} must be a whole number >= 0, got ${v}`;
      return null;
    case 'ratio':
      if (!(v >= 1)) return `${name} must be a ratio >= 1, got ${v}`;
      return null;
    case 'share':
      if (!(v >= 0 && v <= 1)) return `${name} must be a share between 0 and 1, got ${v}`;
      return null;
  }
}
