import { HOUR, MINUTE } from './larkspur.js';

/** The incident's attack order; each gets its own slot after the warm-up. */
export const INCIDENT_EPISODES = ['vertical-scan', 'horizontal-scan', 'syn-flood', 'udp-surge', 'upload'] as const;
export type IncidentEpisode = (typeof INCIDENT_EPISODES)[number];

/** Nominal lengths at full span (ms). */
const NOMINAL: Record<IncidentEpisode, number> = {
  'vertical-scan': 3 * MINUTE,
  'horizontal-scan': 4 * MINUTE,
  'syn-flood': 4 * MINUTE,
  'udp-surge': 6 * MINUTE,
  'upload': 12 * MINUTE,
};

export interface Slot { name: IncidentEpisode; start: number; end: number }

/**
 * Places the episodes: a clean warm-up of a quarter of the span (at least 15 minutes, at most 1.5
 * hours, so baselines have >= 12 windows), then equal slots; each episode starts a tenth into its slot
 * and lasts its nominal length or 60 % of the slot, whichever is shorter. Times are whole seconds.
 */
export function planEpisodes(startMs: number, hours: number, names: readonly IncidentEpisode[]): Slot[] {
  const span = hours * HOUR;
  const warm = Math.min(1.5 * HOUR, Math.max(15 * MINUTE, span / 4));
  const tail = span * 0.05;
  const slot = (span - warm - tail) / Math.max(1, names.length);
  return names.map((name, i) => {
    const s = startMs + warm + i * slot + slot * 0.1;
    const len = Math.min(NOMINAL[name], slot * 0.6);
    const start = Math.round(s / 1000) * 1000;
    return { name, start, end: start + Math.round(len / 1000) * 1000 };
  });
}
