import { writeFileSync } from 'node:fs';

/** Episode families and the alert kinds that detect them (docs/scenario.md). */
export type Family = 'flood' | 'scan' | 'unusual-destination';

export interface TruthEpisode {
  id: string;
  family: Family;
  /** The alert kind a detector is expected to raise. */
  kind: string;
  attackers: string[];
  victims: string[];
  /** RFC 3339 UTC. */
  start: string;
  end: string;
}

export interface TruthBenign {
  label: string;
  hosts: string[];
  start: string;
  end: string;
}

/** Ground truth written beside each generated data file (format: docs/scenario.md). */
export interface Truth {
  scenario: string;
  kind: 'incident' | 'rhythm';
  seed: number;
  start: string;
  end: string;
  window_s: number;
  inside: string[];
  hosts: string[];
  benign_host_hours: number;
  episodes: TruthEpisode[];
  benign: TruthBenign[];
}

export function writeTruth(path: string, t: Truth): void {
  writeFileSync(path, JSON.stringify(t, null, 2) + '\n');
}
