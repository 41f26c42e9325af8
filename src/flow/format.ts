import { FLOW_FIELDS, type FlowRecord } from './record.js';

/** CSV header row of `tidewatch flows --format csv`: the contract's field names in order. */
export const FLOW_CSV_HEADER = FLOW_FIELDS.join(',');

/**
 * One JSON line (no newline) with keys in FLOW_FIELDS order and `vlan` omitted when absent. Built by
 * hand so the key order is fixed by construction, whatever order the record's properties were set in.
 */
export function flowToJson(r: FlowRecord): string {
  const vlan = r.vlan === undefined ? '' : `,"vlan":${r.vlan}`;
  return `{"start":${num(r.start)},"end":${num(r.end)},"proto":${r.proto},"src":${JSON.stringify(r.src)},"dst":${JSON.stringify(r.dst)},`
    + `"sport":${r.sport},"dport":${r.dport},"pkts":${num(r.pkts)},"bytes":${num(r.bytes)},"rpkts":${num(r.rpkts)},"rbytes":${num(r.rbytes)},`
    + `"flags":${r.flags},"rflags":${r.rflags},"outcome":"${r.outcome}","exporter":${JSON.stringify(r.exporter)}${vlan}}`;
}

/** One CSV row (no newline) in FLOW_FIELDS order; `vlan` empty when absent; RFC 4180 quoting. */
export function flowToCsv(r: FlowRecord): string {
  return `${num(r.start)},${num(r.end)},${r.proto},${csvText(r.src)},${csvText(r.dst)},${r.sport},${r.dport},`
    + `${num(r.pkts)},${num(r.bytes)},${num(r.rpkts)},${num(r.rbytes)},${r.flags},${r.rflags},${r.outcome},${csvText(r.exporter)},`
    + `${r.vlan === undefined ? '' : r.vlan}`;
}

/** JSON has no NaN or Infinity: they would make the line invalid, so they print as null. */
function num(x: number): string {
  return Number.isFinite(x) ? String(x) : 'null';
}

/** RFC 4180 section 2: quote a field holding a comma, quote or line break; double inner quotes. */
function csvText(s: string): string {
  return /[",\r\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}
