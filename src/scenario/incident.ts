import { PcapWriter } from '../capture/writer.js';
import { addBackground, buildWorld, type AttackSizes } from './background.js';
import { CAST, addEpisode } from './episodes.js';
import { HOUR, INSIDE_CIDRS, MINUTE, SCENARIO_NAME } from './larkspur.js';
import { Prng } from './prng.js';
import { INCIDENT_EPISODES, planEpisodes, type IncidentEpisode } from './schedule.js';
import { Sim } from './sim.js';
import { writeTruth, type Truth } from './truth.js';

/** A Tuesday, 09:00 UTC: the capture opens at the start of clinic hours. */
export const INCIDENT_START = Date.UTC(2026, 2, 10, 9, 0, 0);

export interface IncidentOptions {
  seed: number;
  dataFile: string;
  truthFile: string;
  hours?: number;
  scale?: number;
  volume?: number;
  attacks?: AttackSizes;
  snaplen?: number;
  linkType?: 1 | 101;
  episodes?: readonly IncidentEpisode[];
}

export interface IncidentResult {
  packets: number;
  fileBytes: number;
  truth: Truth;
}

/** Writes the incident capture and its truth: benign background with the attacks of docs/scenario.md. */
export function generateIncident(o: IncidentOptions): IncidentResult {
  const hours = o.hours ?? 6;
  const scale = o.scale ?? 1;
  const startMs = INCIDENT_START;
  const endMs = startMs + Math.round(hours * HOUR);
  const writer = new PcapWriter(o.dataFile, { snaplen: o.snaplen ?? 96, linkType: o.linkType ?? 1 });
  const rng = new Prng(o.seed);
  const world = buildWorld((n) => new Sim(writer, startMs * 1000, endMs * 1000, n, o.linkType ?? 1), rng, o.seed, scale, o.volume ?? 1, o.attacks);
  const sim = world.sim;
  // the scanning phone is on the Wi-Fi from 20 minutes before its slot until 10 minutes after, whether or
  // not the scan is included, so the background does not depend on the episode list
  const scanSlot = planEpisodes(startMs, hours, INCIDENT_EPISODES).find((s) => s.name === 'vertical-scan')!;
  addBackground(world, [{ addr: CAST.verticalScanner, startUs: (scanSlot.start - 20 * MINUTE) * 1000, endUs: (scanSlot.end + 10 * MINUTE) * 1000 }]);
  const planned = planEpisodes(startMs, hours, o.episodes ?? INCIDENT_EPISODES);
  const added = planned.map((slot, i) => addEpisode(world, slot, i + 1));
  try {
    sim.run();
  } finally {
    writer.close();
  }
  for (const a of added) a.settle?.();

  let hostHours = 0;
  for (const v of sim.benignHours) hostHours += v;
  const truth: Truth = {
    scenario: SCENARIO_NAME,
    kind: 'incident',
    seed: o.seed,
    start: new Date(startMs).toISOString(),
    end: new Date(endMs).toISOString(),
    window_s: 60,
    inside: INSIDE_CIDRS,
    hosts: world.addresses.filter((_, i) => sim.active[i] !== 0),
    benign_host_hours: hostHours,
    episodes: added.map((a) => a.truth),
    benign: world.benign.sort((a, b) => a.start.localeCompare(b.start)),
  };
  writeTruth(o.truthFile, truth);
  return { packets: writer.packets, fileBytes: writer.fileBytes, truth };
}
