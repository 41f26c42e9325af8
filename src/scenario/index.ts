import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import type { AttackSizes } from './background.js';
import { generateIncident } from './incident.js';
import { generateRhythm } from './rhythm.js';
import type { IncidentEpisode } from './schedule.js';

export { writeFlowLog, flowRecordLine } from './flowlog.js';
export type { AttackSizes } from './background.js';
export { INCIDENT_EPISODES, type IncidentEpisode } from './schedule.js';
export type { Truth, TruthEpisode, TruthBenign, Family } from './truth.js';

export interface ScenarioOptions {
  kind: 'incident' | 'rhythm';
  seed: number;
  outDir: string;
  /** Span in hours: incident default 6, rhythm default 192 (8 days). */
  hours?: number;
  /** Multiplies every benign connection rate and the SYN flood rate; default 1. */
  scale?: number;
  /** Incident only: multiplies payload octets per connection (and the upload); default 1. */
  volume?: number;
  /** Incident only: which episodes to include (default all, in their fixed order); [] gives the clean background. */
  episodes?: readonly IncidentEpisode[];
  /** Incident only: explicit attack sizes instead of the ones derived from scale and volume. */
  attacks?: AttackSizes;
  /** Incident only: captured octets per packet (default 96); IP lengths stay true. */
  snaplen?: number;
  /** Base name of the files: NAME.pcap / NAME.jsonl and NAME.truth.json; default `incident` / `rhythm` with `truth.json`. */
  name?: string;
}

/**
 * Generates a Larkspur scenario deterministically from the seed (same options, same bytes):
 * `incident` is a pcap with attacks, `rhythm` an eight-day flow log; each with its truth JSON.
 */
export async function generateScenario(opts: ScenarioOptions): Promise<{ dataFile: string; truthFile: string }> {
  mkdirSync(opts.outDir, { recursive: true });
  const ext = opts.kind === 'incident' ? 'pcap' : 'jsonl';
  const dataFile = join(opts.outDir, `${opts.name ?? opts.kind}.${ext}`);
  const truthFile = join(opts.outDir, opts.name ? `${opts.name}.truth.json` : 'truth.json');
  const common = { seed: opts.seed, dataFile, truthFile, hours: opts.hours, scale: opts.scale };
  if (opts.kind === 'incident') generateIncident({ ...common, volume: opts.volume, attacks: opts.attacks, episodes: opts.episodes, snaplen: opts.snaplen });
  else generateRhythm(common);
  return { dataFile, truthFile };
}
