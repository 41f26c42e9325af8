import type { AlertKind } from '../../detect/finding.js';
import type { EpisodeSpan } from '../data.js';
import { GRID, INK, KIND_LOOK, MUTED, kindFill } from './palette.js';
import { timeTicks } from './scale.js';
import { esc, px } from './svg.js';

const W = 960;
const LABEL_W = 190, RIGHT = 16, TOP = 8, LANE_H = 18, ROW_GAP = 6, AXIS_H = 28, LEGEND_H = 26;

export interface TimelineHost { host: string; anchor: string; episodes: EpisodeSpan[] }

/**
 * Every alert episode on one time axis: a row per host (overlapping episodes of a host get lanes), each
 * bar filled with its kind's colour and pattern, labelled with the kind where it fits, and linked to
 * the host's section. A legend names each kind shown.
 */
export function timelineChart(hosts: readonly TimelineHost[], t0: number, t1: number): string {
  if (!(t1 > t0)) t1 = t0 + 60_000;
  const x = (t: number) => LABEL_W + ((t - t0) / (t1 - t0)) * (W - LABEL_W - RIGHT);
  const parts: string[] = [];
  let yy = TOP;
  const kinds = new Set<AlertKind>();
  for (const h of hosts) {
    const lanes = assignLanes(h.episodes);
    const rowH = Math.max(1, ...lanes.map((l) => l + 1)) * LANE_H;
    parts.push(`<line x1="0" x2="${W - RIGHT}" y1="${px(yy + rowH + ROW_GAP / 2)}" y2="${px(yy + rowH + ROW_GAP / 2)}" stroke="${GRID}"/>`,
      `<a href="#${h.anchor}"><text x="4" y="${px(yy + LANE_H / 2 + 4)}" fill="${INK}">${esc(h.host)}</text></a>`);
    h.episodes.forEach((e, i) => {
      kinds.add(e.alert.kind);
      const a = x(e.startMs), w = Math.max(3, x(e.endMs) - a), top = yy + lanes[i]! * LANE_H + 2;
      const look = KIND_LOOK[e.alert.kind];
      const label = w > e.alert.kind.length * 6.5 + 6
        ? `<text x="${px(a + 4)}" y="${px(top + 11)}" class="bar-label">${esc(e.alert.kind)}</text>` : '';
      parts.push(`<a href="#${h.anchor}"><rect class="episode" x="${px(a)}" y="${px(top)}" width="${px(w)}" height="${LANE_H - 4}" `
        + `fill="${kindFill(e.alert.kind)}" stroke="${look.colour}"><title>${esc(`${e.alert.host} ${e.alert.kind} (${e.alert.severity}) `
        + `${e.alert.start} .. ${e.alert.end}`)}</title></rect>${label}</a>`);
    });
    yy += rowH + ROW_GAP;
  }
  const base = yy + 2;
  parts.push(`<line x1="${LABEL_W}" x2="${W - RIGHT}" y1="${px(base)}" y2="${px(base)}" stroke="${INK}"/>`);
  for (const tk of timeTicks(t0, t1, 10)) {
    const xx = px(x(tk.t));
    parts.push(`<line x1="${xx}" x2="${xx}" y1="${px(base)}" y2="${px(base + 4)}" stroke="${INK}"/>`,
      `<text x="${xx}" y="${px(base + 16)}" text-anchor="middle">${tk.label}</text>`);
  }
  parts.push(`<text x="${W - RIGHT}" y="${px(base + AXIS_H - 2)}" text-anchor="end" fill="${MUTED}">time (UTC)</text>`);
  let lx = 4;
  const ly = base + AXIS_H + 8;
  for (const k of kinds) {
    parts.push(`<rect x="${lx}" y="${px(ly)}" width="22" height="12" fill="${kindFill(k)}" stroke="${KIND_LOOK[k].colour}"/>`,
      `<text x="${lx + 28}" y="${px(ly + 10)}">${esc(k)}</text>`);
    lx += 44 + k.length * 6.6;
  }
  const h = ly + LEGEND_H;
  return `<svg class="timeline" viewBox="0 0 ${W} ${px(h)}" width="${W}" height="${px(h)}" role="img" aria-labelledby="timeline-title">`
    + `<title id="timeline-title">Alert episodes by host over time</title>${parts.join('')}</svg>`;
}

/** Greedy lanes: each episode takes the first lane whose last episode ended before it starts. */
function assignLanes(eps: readonly EpisodeSpan[]): number[] {
  const laneEnd: number[] = [];
  return eps.map((e) => {
    let l = laneEnd.findIndex((end) => end <= e.startMs);
    if (l < 0) { l = laneEnd.length; laneEnd.push(e.endMs); } else laneEnd[l] = e.endMs;
    return l;
  });
}
