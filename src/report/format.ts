import { fmtBytes } from '../alert/explain.js';

/** How values of a feature read on an axis or in a table: bytes in SI units, ratios in percent. */
export function valueFormatter(feature: string): (v: number) => string {
  if (isByteFeature(feature)) return fmtBytes;
  if (feature === 'failure_ratio') return (v) => `${Math.round(v * 100)}%`;
  if (feature.startsWith('entropy_')) return (v) => v.toFixed(2);
  return fmtCount;
}

export function isByteFeature(feature: string): boolean {
  return feature.startsWith('bytes_') || feature.startsWith('nontcp_bytes_') || feature === 'new_peer_bytes';
}

/** Features that count things (bytes, packets, flows, peers, ports): candidates for a log axis. */
export function isCountFeature(feature: string): boolean {
  return !feature.startsWith('entropy_') && feature !== 'failure_ratio';
}

/** Counts with k / M suffixes (SI, 1 k = 1000). */
export function fmtCount(v: number): string {
  const a = Math.abs(v);
  if (a >= 1e9) return `${trim(v / 1e9)}G`;
  if (a >= 1e6) return `${trim(v / 1e6)}M`;
  if (a >= 1e4) return `${trim(v / 1e3)}k`;
  return Number.isInteger(v) ? String(v) : v.toFixed(a < 10 ? 1 : 0);
}

function trim(v: number): string {
  return Math.abs(v) < 10 ? v.toFixed(1).replace(/\.0$/, '') : String(Math.round(v));
}

/** A duration in words for summaries: "6 h 0 min", "45 min", "30 s". */
export function fmtDuration(ms: number): string {
  const s = Math.round(ms / 1000);
  if (s < 60) return `${s} s`;
  const m = Math.round(s / 60);
  if (m < 60) return `${m} min`;
  const h = Math.floor(m / 60);
  if (h < 48) return `${h} h ${m % 60} min`;
  return `${Math.floor(h / 24)} d ${h % 24} h`;
}

/** "2026-03-10 09:15 UTC" */
export function fmtUtc(ms: number): string {
  const iso = new Date(ms).toISOString();
  return `${iso.slice(0, 10)} ${iso.slice(11, 16)} UTC`;
}
