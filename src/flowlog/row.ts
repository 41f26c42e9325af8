import { OUTCOMES, type FlowRecord, type Outcome } from '../flow/record.js';
import { normaliseAddress } from '../util/addr.js';
import { parseRfc3339 } from '../util/time.js';
import { exportedOutcome } from './outcome.js';

/** Row keys a flow log may use: FlowRecord field names, or IPFIX IE names (IANA registry, RFC 7012). */
const ALIASES: Record<string, string> = {
  flowStartMilliseconds: 'start', flowStartSeconds: 'start', flowStartMicroseconds: 'start',
  flowEndMilliseconds: 'end', flowEndSeconds: 'end', flowEndMicroseconds: 'end',
  protocolIdentifier: 'proto',
  sourceIPv4Address: 'src', sourceIPv6Address: 'src',
  destinationIPv4Address: 'dst', destinationIPv6Address: 'dst',
  sourceTransportPort: 'sport', destinationTransportPort: 'dport',
  packetDeltaCount: 'pkts', octetDeltaCount: 'bytes',
  reversePacketDeltaCount: 'rpkts', reverseOctetDeltaCount: 'rbytes',
  initiatorPackets: 'pkts', initiatorOctets: 'bytes', responderPackets: 'rpkts', responderOctets: 'rbytes',
  // running totals count only when the row has no delta (or initiator/responder) counter
  packetTotalCount: 'pkts~', octetTotalCount: 'bytes~', reversePacketTotalCount: 'rpkts~', reverseOctetTotalCount: 'rbytes~',
  tcpControlBits: 'flags', reverseTcpControlBits: 'rflags',
  vlanId: 'vlan',
  icmpTypeCodeIPv4: 'icmpTypeCode', icmpTypeCodeIPv6: 'icmpTypeCode',
};

/** The FlowRecord field a row key stands for (unknown keys are returned unchanged and ignored). */
export function canonicalKey(k: string): string {
  const t = k.trim();
  return ALIASES[t] ?? t;
}

const PROTO_NAMES: Record<string, number> = { tcp: 6, udp: 17, icmp: 1, icmpv6: 58, 'ipv6-icmp': 58, sctp: 132 };

function present(v: unknown): boolean {
  return v !== undefined && v !== null && v !== '';
}

function num(v: unknown): number {
  if (typeof v === 'number') return v;
  if (typeof v === 'string' && v.trim() !== '') return Number(v);
  return NaN;
}

/** Epoch seconds or epoch ms (told apart by magnitude: below 1e11 is seconds), or RFC 3339 text. */
export function parseTimestamp(v: unknown): number {
  const n = num(v);
  if (Number.isFinite(n)) return Math.abs(n) < 1e11 ? n * 1000 : n;
  return typeof v === 'string' ? parseRfc3339(v.trim()) : NaN;
}

function count(row: Record<string, unknown>, k: string): number | string {
  const v = row[k];
  if (!present(v)) return 0;
  const n = num(v);
  return Number.isFinite(n) && n >= 0 ? n : `${k} is not a non-negative number`;
}

/**
 * One flow-log row (keys already canonical, see canonicalKey) as a FlowRecord, or the reason it is not
 * one. `exporter` is used unless the row names its own.
 */
export function rowToFlow(row: Record<string, unknown>, exporter: string): FlowRecord | string {
  for (const k of ['pkts', 'bytes', 'rpkts', 'rbytes']) if (!present(row[k]) && present(row[`${k}~`])) row[k] = row[`${k}~`];
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
  if (!Number.isFinite(start)) start = end;
  if (!Number.isFinite(end)) end = start;

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
