import type { EpisodeSpan, FeatureSeries } from '../data.js';
import { isCountFeature, valueFormatter } from '../format.js';
import { GRID, INK, MUTED, SERIES } from './palette.js';
import { linearScale, logScale, timeTicks, wantsLog, type Scale } from './scale.js';
import { esc, px, runs } from './svg.js';

const W = 960, H = 230;
const M = { left: 66, right: 22, top: 30, bottom: 36 };

/**
 * One feature of one host as an SVG: the observed series (dark, solid) against the expected value
 * (dashed) and the normal band (pale fill, dotted edges), the alert episodes hatched between band and lines,
 * UTC time ticks, and a log axis for counts that range widely. Every series is named in the legend.
 */
export function featureChart(s: FeatureSeries, episodes: readonly EpisodeSpan[], titleId: string): string {
  const n = s.observed.length;
  const t0 = s.startMs, t1 = s.startMs + n * s.stepMs;
  const x = (t: number) => M.left + ((t - t0) / (t1 - t0)) * (W - M.left - M.right);
  const xs = Float64Array.from({ length: n }, (_, i) => x(t0 + (i + 0.5) * s.stepMs));
  const y = yScale(s);
  const fmt = valueFormatter(s.feature);
  const parts: string[] = [];

  for (const v of y.ticks()) {
    const yy = y.map(v);
    parts.push(`<line x1="${M.left}" x2="${W - M.right}" y1="${px(yy)}" y2="${px(yy)}" stroke="${GRID}"/>`,
      `<text x="${M.left - 6}" y="${px(yy + 3.5)}" text-anchor="end">${esc(fmt(v))}</text>`);
  }
  const hi = clampTo(s.high, y), lo = clampTo(s.low, y);
  for (const poly of bandPolygons(xs, hi, lo)) parts.push(`<polygon points="${poly}" fill="${SERIES.band.fill}"/>`);
  const edge = `fill="none" stroke="${SERIES.band.stroke}" stroke-dasharray="${SERIES.band.dash}"`;
  for (const r of runs(xs, hi)) parts.push(`<polyline points="${r}" ${edge}/>`);
  for (const r of runs(xs, lo)) parts.push(`<polyline points="${r}" ${edge}/>`);
  // episodes over the band (their hatch is translucent), under the lines
  for (const e of episodes) {
    const a = Math.max(x(e.startMs), M.left), b = Math.min(x(e.endMs), W - M.right);
    if (b <= a) continue;
    parts.push(`<rect class="ep" x="${px(a)}" y="${M.top}" width="${px(Math.max(2, b - a))}" height="${H - M.top - M.bottom}" fill="url(#hatch-episode)">`
      + `<title>${esc(`${e.alert.kind} ${e.alert.start} .. ${e.alert.end}`)}</title></rect>`);
  }
  const ex = SERIES.expected, ob = SERIES.observed;
  for (const r of runs(xs, clampTo(s.expected, y))) {
    parts.push(`<polyline points="${r}" fill="none" stroke="${ex.stroke}" stroke-width="${ex.width}" stroke-dasharray="${ex.dash}"/>`);
  }
  for (const r of runs(xs, clampTo(s.observed, y))) {
    parts.push(`<polyline class="observed" points="${r}" fill="none" stroke="${ob.stroke}" stroke-width="${ob.width}" stroke-linejoin="round"/>`);
  }
  const base = H - M.bottom;
  parts.push(`<line x1="${M.left}" x2="${W - M.right}" y1="${base}" y2="${base}" stroke="${INK}"/>`);
  for (const tk of timeTicks(t0, t1)) {
    const xx = px(x(tk.t));
    parts.push(`<line x1="${xx}" x2="${xx}" y1="${base}" y2="${base + 4}" stroke="${INK}"/>`,
      `<text x="${xx}" y="${base + 16}" text-anchor="middle">${tk.label}</text>`);
  }
  const per = s.pointWindows > 1 ? `, each point the largest of ${s.pointWindows} windows` : '';
  parts.push(`<text x="${W - M.right}" y="${H - 4}" text-anchor="end" fill="${MUTED}">time (UTC)${per}</text>`,
    `<text x="${M.left}" y="${H - 4}" fill="${MUTED}">${esc(s.feature)}${y.kind === 'log' ? ' (log scale)' : ''}</text>`);
  parts.push(legend(s.bandFrom));

  return `<svg class="chart" viewBox="0 0 ${W} ${H}" width="${W}" height="${H}" role="img" aria-labelledby="${titleId}">`
    + `<title id="${titleId}">${esc(`${s.host}: ${s.feature}, observed against the expected band`)}</title>${parts.join('')}</svg>`;
}

/**
 * The axis follows the observed and expected values; the band's upper edge counts only up to a bit
 * above them (a wide band in log1p space can reach absurd heights) and is cut at the top otherwise.
 */
function yScale(s: FeatureSeries): Scale {
  const bottom = H - M.bottom, top = M.top + 4;
  const seen = Math.max(finiteMax(s.observed), finiteMax(s.expected));
  if (s.feature.startsWith('entropy_') || s.feature === 'failure_ratio') return linearScale(0, Math.max(1, seen), bottom, top);
  const log = isCountFeature(s.feature) && wantsLog([...s.observed, ...s.high]);
  const max = Math.max(seen, Math.min(finiteMax(s.high), (log ? 10 : 1.5) * Math.max(seen, 1)));
  return log ? logScale(max, bottom, top) : linearScale(0, max > 0 ? max : 1, bottom, top);
}

function finiteMax(values: Float64Array): number {
  let max = 0;
  for (const v of values) if (Number.isFinite(v) && v > max) max = v;
  return max;
}

/** Pixel y of every value (NaN stays NaN), never above the plot area. */
function clampTo(values: Float64Array, y: Scale): Float64Array {
  const out = new Float64Array(values.length);
  for (let i = 0; i < values.length; i++) {
    const v = values[i]!;
    out[i] = Number.isFinite(v) ? Math.max(M.top, y.map(Math.max(0, v))) : Number.NaN;
  }
  return out;
}

/** One polygon per run of windows with a band: the upper edge left to right, the lower edge back. */
function bandPolygons(xs: Float64Array, hi: Float64Array, lo: Float64Array): string[] {
  const out: string[] = [];
  let i = 0;
  while (i < xs.length) {
    if (!Number.isFinite(hi[i]!)) { i++; continue; }
    let j = i;
    while (j < xs.length && Number.isFinite(hi[j]!)) j++;
    const pts: string[] = [];
    for (let k = i; k < j; k++) pts.push(`${px(xs[k]!)},${px(hi[k]!)}`);
    for (let k = j - 1; k >= i; k--) pts.push(`${px(xs[k]!)},${px(lo[k]!)}`);
    out.push(pts.join(' '));
    i = j;
  }
  return out;
}

const BAND_LABEL: Record<FeatureSeries['bandFrom'], string> = {
  baseline: 'normal band (host baseline)',
  rule: 'normal band (detector rule)',
  mixed: 'normal band (host baseline; rule before it was ready)',
};

function legend(bandFrom: FeatureSeries['bandFrom']): string {
  const ob = SERIES.observed, ex = SERIES.expected, b = SERIES.band;
  const items: [string, string][] = [
    [`<line x1="0" x2="22" y1="0" y2="0" stroke="${ob.stroke}" stroke-width="${ob.width}"/>`, 'observed'],
    [`<line x1="0" x2="22" y1="0" y2="0" stroke="${ex.stroke}" stroke-width="${ex.width}" stroke-dasharray="${ex.dash}"/>`, 'expected'],
    [`<rect x="0" y="-6" width="22" height="12" fill="${b.fill}" stroke="${b.stroke}" stroke-dasharray="${b.dash}"/>`,
      BAND_LABEL[bandFrom]],
    ['<rect x="0" y="-6" width="22" height="12" fill="url(#hatch-episode)"/>', 'alert episode'],
  ];
  let xx = M.left;
  const out: string[] = [];
  for (const [mark, label] of items) {
    out.push(`<g transform="translate(${xx},14)">${mark}<text x="28" y="4">${label}</text></g>`);
    xx += 40 + label.length * 6.2;
  }
  return out.join('');
}
