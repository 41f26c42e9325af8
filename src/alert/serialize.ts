import type { Evidence, SampleFlow } from '../detect/finding.js';
import { ALERT_KEYS, type Alert } from './alert.js';

/**
 * Largest magnitude written for any number: 2^53 - 1, the last integer JSON consumers keep exact
 * (RFC 8259 section 6, METHODS 8.2). Larger values, and infinities, are clamped to it; NaN becomes 0.
 */
export const MAX_JSON_NUMBER = Number.MAX_SAFE_INTEGER;

const EVIDENCE_BASE = ['top_peers', 'top_ports', 'sample_flows', 'flows', 'packets', 'bytes'] as const;
const SAMPLE_FLOW_KEYS = [
  'start', 'proto', 'src', 'dst', 'sport', 'dport', 'pkts', 'bytes', 'rpkts', 'rbytes', 'outcome',
] as const satisfies readonly (keyof SampleFlow)[];

/**
 * One alert as one JSON line (without the newline): keys in ALERT_KEYS order, evidence keys in a fixed
 * order (base keys, then extras sorted by name), observed/expected/low/high rounded to 4 decimals,
 * score to 2, counts as non-negative integers, every number finite. Evidence extras that are neither
 * numbers nor strings are left out (the schema allows only those). U+2028 and U+2029 are escaped for consumers that split on them.
 */
export function alertToJson(a: Alert): string {
  const parts: string[] = [];
  for (const k of ALERT_KEYS) {
    let v: string;
    switch (k) {
      case 'observed': case 'expected': case 'low': case 'high': v = jsonNumber(a[k], 4); break;
      case 'score': v = jsonNumber(a[k], 2); break;
      case 'evidence': v = evidenceJson(a.evidence); break;
      default: v = str(a[k]);
    }
    parts.push(`"${k}":${v}`);
  }
  return `{${parts.join(',')}}`;
}

function evidenceJson(e: Evidence): string {
  const parts = [
    `"top_peers":[${e.top_peers.map((p) => `{"peer":${str(p.peer)},"count":${count(p.count)}}`).join(',')}]`,
    `"top_ports":[${e.top_ports.map((p) => `{"port":${count(p.port)},"count":${count(p.count)}}`).join(',')}]`,
    `"sample_flows":[${e.sample_flows.map(sampleFlowJson).join(',')}]`,
    `"flows":${count(e.flows)}`,
    `"packets":${count(e.packets)}`,
    `"bytes":${count(e.bytes)}`,
  ];
  const base: ReadonlySet<string> = new Set(EVIDENCE_BASE);
  for (const k of Object.keys(e).filter((k) => !base.has(k)).sort()) {
    const v = e[k];
    if (typeof v === 'number') parts.push(`${str(k)}:${jsonNumber(v, 4)}`);
    else if (typeof v === 'string') parts.push(`${str(k)}:${str(v)}`);
  }
  return `{${parts.join(',')}}`;
}

function sampleFlowJson(f: SampleFlow): string {
  return `{${SAMPLE_FLOW_KEYS.map((k) => {
    const v = f[k];
    return `"${k}":${typeof v === 'number' ? count(v) : str(v)}`;
  }).join(',')}}`;
}

/** Counts, ports and protocol numbers are non-negative integers on the wire. */
function count(x: number): string {
  return jsonNumber(Math.max(0, x), 0);
}

/** A finite JSON number, optionally rounded to `decimals` places (the rules above). */
export function jsonNumber(x: number, decimals?: number): string {
  let v = Number.isNaN(x) ? 0 : Math.max(-MAX_JSON_NUMBER, Math.min(MAX_JSON_NUMBER, x));
  // Past 1e11 a double holds fewer than 4 decimals anyway, and scaling up would cost exactness.
  if (decimals !== undefined && Math.abs(v) < 1e11) v = Math.round(v * 10 ** decimals) / 10 ** decimals;
  return JSON.stringify(v); // JSON.stringify writes -0 as 0
}

function str(s: string): string {
  // DEL and C1 controls too (JSON leaves them raw): a feed read on a terminal cannot steer it
  return JSON.stringify(String(s)).replace(/[\u007f-\u009f\u2028\u2029]/g, (c) => `\\u${c.charCodeAt(0).toString(16).padStart(4, '0')}`);
}
