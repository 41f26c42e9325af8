import { OUTCOMES, type FlowRecord, type Outcome } from '../flow/record.js';
import { normaliseAddress } from '../util/addr.js';
import { parseRfc3339 } from '../util/time.js';
import { parseTcpFlags } from './columns.js';
import { exportedOutcome } from './outcome.js';

/** Protocol names (IANA "Protocol Numbers" keywords, and the spellings flow logs use for ICMPv6). */
const PROTO_NAMES: Record<string, number> = {
  tcp: 6, udp: 17, icmp: 1, icmpv6: 58, 'ipv6-icmp': 58, icmp6: 58, sctp: 132, igmp: 2, gre: 47, esp: 50, ah: 51,
  ipv6: 41, ospf: 89, ospfigp: 89, pim: 103, vrrp: 112, udplite: 136,
};

function present(v: unknown): boolean {
  return v !== undefined && v !== null && v !== '';
}

function num(v: unknown): number {
  if (typeof v === 'number') return v;
  if (typeof v === 'string' && v.trim() !== '') return Number(v);
  return NaN;
}

/**
 * Epoch seconds, milliseconds, microseconds or nanoseconds, told apart by magnitude (below 1e11 is
 * seconds, below 1e14 milliseconds, below 1e17 microseconds: each spans the years 1973 to 5138), or
 * RFC 3339 text; a date and time without a zone (`2026-03-10 09:00:02.5`, or with slashes,
 * `2026/03/10 09:00:02.5`) is taken as UTC.
 */
export function parseTimestamp(v: unknown): number {
  const n = num(v);
  if (Number.isFinite(n)) {
    const a = Math.abs(n);
    return a < 1e11 ? n * 1000 : a < 1e14 ? n : a < 1e17 ? n / 1000 : n / 1e6;
  }
  if (typeof v !== 'string') return NaN;
  let t = v.trim();
  // year first with slashes (2026/03/10 09:00:02) is unambiguous; day-first and month-first are not read
  if (/^\d{4}\/\d{2}\/\d{2}[Tt ]/.test(t)) t = `${t.slice(0, 4)}-${t.slice(5, 7)}-${t.slice(8)}`;
  return parseRfc3339(/^\d{4}-\d{2}-\d{2}[Tt ]\d{2}:\d{2}:\d{2}(\.\d+)?$/.test(t) ? `${t}Z` : t);
}

function count(row: Record<string, unknown>, k: string): number | string {
  const v = row[k];
  if (!present(v)) return 0;
  const n = num(v);
  return Number.isFinite(n) && n >= 0 ? n : `${k} is not a non-negative number`;
}

/** A row's duration in milliseconds (0 when it has none), or why it is not one. */
function duration(row: Record<string, unknown>): number | string {
  for (const [k, ms] of [['durationMs', 1], ['durationUs', 0.001], ['durationS', 1000]] as const) {
    if (!present(row[k])) continue;
    const d = num(row[k]);
    return Number.isFinite(d) && d >= 0 ? d * ms : `${k === 'durationS' ? 'duration' : k} ${JSON.stringify(row[k])} is not a duration`;
  }
  return 0;
}

/**
 * One flow-log row (keys already canonical, see canonicalKey) as a FlowRecord, or the reason it is not
 * one. `exporter` is used unless the row names its own.
 */
export function rowToFlow(row: Record<string, unknown>, exporter: string): FlowRecord | string {
  for (const k of ['pkts', 'bytes', 'rpkts', 'rbytes', 'start']) if (!present(row[k]) && present(row[`${k}~`])) row[k] = row[`${k}~`];
  // TCP flags may be written as letters or names (columns.ts); a number stays a number
  for (const k of ['flags', 'rflags']) if (typeof row[k] === 'string' && present(row[k])) row[k] = parseTcpFlags(row[k]);
  const src = typeof row['src'] === 'string' ? normaliseAddress(row['src'].trim()) : null;
  if (!src) return present(row['src']) ? `src ${JSON.stringify(row['src'])} is not an address` : 'src missing';
  const dst = typeof row['dst'] === 'string' ? normaliseAddress(row['dst'].trim()) : null;
  if (!dst) return present(row['dst']) ? `dst ${JSON.stringify(row['dst'])} is not an address` : 'dst missing';
  const pv = row['proto'];
  const proto = typeof pv === 'string' && PROTO_NAMES[pv.trim().toLowerCase()] !== undefined
    ? PROTO_NAMES[pv.trim().toLowerCase()]! : num(pv);
  if (!Number.isInteger(proto) || proto < 0 || proto > 255) return present(pv) ? `proto ${JSON.stringify(pv)} is not a protocol` : 'proto missing';
  let start = present(row['start']) ? parseTimestamp(row['start']) : NaN;
  let end = present(row['end']) ? parseTimestamp(row['end']) : NaN;
  if (present(row['start']) && !Number.isFinite(start)) return `start ${JSON.stringify(row['start'])} is not a timestamp`;
  if (present(row['end']) && !Number.isFinite(end)) return `end ${JSON.stringify(row['end'])} is not a timestamp`;
  if (!Number.isFinite(start) && !Number.isFinite(end)) return 'start missing';
  const dur = duration(row);
  if (typeof dur === 'string') return dur;
  if (!Number.isFinite(start)) start = end - dur;
  if (!Number.isFinite(end)) end = start + dur;

  const fields = ['sport', 'dport', 'pkts', 'bytes', 'rpkts', 'rbytes', 'flags', 'rflags'] as const;
  const v: Record<(typeof fields)[number], number> = { sport: 0, dport: 0, pkts: 0, bytes: 0, rpkts: 0, rbytes: 0, flags: 0, rflags: 0 };
  for (const k of fields) {
    const c = count(row, k);
    if (typeof c === 'string') return c;
    v[k] = c;
  }
  let { sport, dport } = v;
  if (proto === 1 || proto === 58) {
    // ICMP: sport 0, dport = type*256 + code (src/flow/record.ts)
    sport = 0;
    const tc = count(row, 'icmpTypeCode');
    if (typeof tc === 'string') return tc;
    if (present(row['icmpTypeCode'])) dport = tc;
  }
  const ov = row['outcome'];
  let outcome: Outcome;
  if (present(ov)) {
    if (!OUTCOMES.includes(ov as Outcome)) return `outcome ${JSON.stringify(ov)} is not one of ${OUTCOMES.join(', ')}`;
    outcome = ov as Outcome;
  } else {
    const biflow = present(row['rpkts']) || present(row['rbytes']);
    outcome = exportedOutcome(proto, v.flags, v.rflags, v.rpkts + v.rbytes, biflow, present(row['flags']), present(row['rflags']));
  }
  const rec: FlowRecord = {
    start, end, proto, src, dst, sport, dport, pkts: v.pkts, bytes: v.bytes, rpkts: v.rpkts, rbytes: v.rbytes,
    flags: v.flags & 0xff, rflags: v.rflags & 0xff, outcome,
    exporter: typeof row['exporter'] === 'string' && row['exporter'] !== '' ? row['exporter'] : exporter,
  };
  if (present(row['vlan'])) {
    const vl = num(row['vlan']);
    if (!Number.isInteger(vl) || vl < 0 || vl > 4095) return `vlan ${JSON.stringify(row['vlan'])} is not a VLAN id`;
    rec.vlan = vl;
  }
  return rec;
}
