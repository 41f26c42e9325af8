import type { Alert } from './alert.js';

type Phrase = (a: Alert, v: Values) => string;

interface Values {
  /** The observed value, formatted for the feature. */
  obs: string;
  /** "in 60 s" or "in one window". */
  span: string;
  peer: string | undefined;
  port: number | undefined;
}

const count = (x: number): string => fmtNumber(Math.round(x));

/** What the host did, per feature (source role unless the feature is about a target). */
const PHRASES: Record<string, Phrase> = {
  bytes_out: (a, v) => `${a.host} sent ${v.obs} ${v.span}`,
  bytes_in: (a, v) => `${a.host} received ${v.obs} ${v.span}`,
  pkts_out: (a, v) => `${a.host} sent ${v.obs} packets ${v.span}`,
  pkts_in: (a, v) => `${a.host} received ${v.obs} packets ${v.span}`,
  nontcp_bytes_out: (a, v) => `${a.host} sent ${v.obs} of UDP, ICMP and other non-TCP traffic ${v.span}`,
  nontcp_bytes_in: (a, v) => `${a.host} received ${v.obs} of UDP, ICMP and other non-TCP traffic ${v.span}`,
  flows_out: (a, v) => `${a.host} opened ${v.obs} flows ${v.span}`,
  flows_in: (a, v) => `${a.host} was the target of ${v.obs} flows ${v.span}`,
  distinct_peers: (a, v) => `${a.host} contacted ${v.obs} distinct hosts ${v.span}`,
  distinct_dst_ports: (a, v) => `${a.host} contacted ${v.obs} distinct ports${v.peer ? ` on ${v.peer}` : ''} ${v.span}`,
  max_ports_per_peer: (a, v) => `${a.host} contacted ${v.obs} distinct ports on ${v.peer ?? 'one host'} ${v.span}`,
  max_peers_per_port: (a, v) =>
    `${a.host} contacted ${v.obs} distinct hosts on ${v.port !== undefined ? `port ${v.port}` : 'one port'} ${v.span}`,
  distinct_sources: (a, v) => `${a.host} was contacted by ${v.obs} distinct sources ${v.span}`,
  failed_out: (a, v) => `${a.host} made ${v.obs} failed connection attempts ${v.span}`,
  failure_ratio: (a, v) => `${v.obs} of the connection attempts by ${a.host} failed ${v.span}`,
  syn_only_in: (a, v) => `${a.host} received ${v.obs} connection attempts that were never completed ${v.span}`,
  new_peer_bytes: (a, v) => `${a.host} sent ${v.obs} to ${v.peer ?? 'destinations'} it had not used before ${v.span}`,
  entropy_dst_ports: (a, v) => `the destination ports used by ${a.host} had a normalised entropy of ${v.obs} ${v.span}`,
  entropy_dst_addrs: (a, v) => `the destination addresses used by ${a.host} had a normalised entropy of ${v.obs} ${v.span}`,
  entropy_src_addrs: (a, v) => `the source addresses reaching ${a.host} had a normalised entropy of ${v.obs} ${v.span}`,
};

/** How each feature's values read: bytes in kB/MB/GB, ratios as percent, entropy with 2 decimals. */
function formatterFor(feature: string): (x: number) => string {
  if (feature.startsWith('bytes_') || feature.startsWith('nontcp_bytes_') || feature === 'new_peer_bytes') return fmtBytes;
  if (feature === 'failure_ratio') return fmtPercent;
  if (feature.startsWith('entropy_')) return (x) => fmtNumber(round(x, 2));
  if (feature in PHRASES) return count;
  return (x) => fmtNumber(round(x, 4));
}

/**
 * One plain-language sentence for an alert, e.g. "10.60.2.14 contacted 812 distinct ports on 10.60.0.5
 * in 60 s; its normal is 0 to 4; 97% of the attempts failed."
 */
export function explain(a: Alert): string {
  const fmt = formatterFor(a.feature);
  const e = a.evidence;
  const windowS = typeof e.window_s === 'number' && e.window_s > 0 ? e.window_s : undefined;
  const values: Values = {
    obs: fmt(a.observed),
    span: windowS !== undefined ? `in ${fmtNumber(windowS)} s` : 'in one window',
    peer: typeof e.peer === 'string' ? e.peer : e.top_peers[0]?.peer,
    port: typeof e.port === 'number' ? e.port : e.top_ports[0]?.port,
  };
  const phrase = PHRASES[a.feature];
  const head = phrase
    ? phrase(a, values)
    : `${a.host} (${a.role}) showed ${a.feature} = ${values.obs} ${values.span}`;
  const parts = [head, `its normal is ${fmt(Math.max(0, a.low))} to ${fmt(Math.max(0, a.high))}`];
  if (a.kind === 'traffic-shift') {
    parts.push(`its level has stayed ${e.direction === 'down' ? 'below' : 'above'} normal for several windows`);
  }
  if (typeof e.failure_ratio === 'number' && a.feature !== 'failure_ratio') {
    parts.push(`${fmtPercent(e.failure_ratio)} of the attempts failed`);
  }
  if (typeof e.trw_log_ratio === 'number') {
    parts.push(`the sequential scan test's log-likelihood ratio reached ${fmtNumber(round(e.trw_log_ratio, 2))}`);
  }
  if (typeof e.input_loss === 'number' && e.input_loss > 0) {
    parts.push(`the input reported losses (${fmtNumber(round(e.input_loss, 4))}), so counts may be low`);
  }
  return `${parts.join('; ')}.`;
}

/** SI byte units: 1 kB = 1000 B. */
export function fmtBytes(x: number): string {
  const units = ['B', 'kB', 'MB', 'GB', 'TB', 'PB'];
  let v = Number.isFinite(x) ? Math.max(0, x) : 0;
  let i = 0;
  while (v >= 999.5 && i < units.length - 1) {
    v /= 1000;
    i++;
  }
  return i === 0 ? `${Math.round(v)} B` : `${v < 9.95 ? v.toFixed(1) : Math.round(v)} ${units[i]}`;
}

function fmtPercent(ratio: number): string {
  return `${Math.round(Math.max(0, Math.min(1, ratio)) * 100)}%`;
}

function fmtNumber(x: number): string {
  return Number.isFinite(x) ? String(x) : '?';
}

function round(x: number, decimals: number): number {
  return Math.round(x * 10 ** decimals) / 10 ** decimals;
}
