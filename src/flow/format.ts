import { FLOW_FIELDS, type FlowRecord } from './record.js';

/** CSV header row of `tidewatch flows --format csv`: the contract's field names in order. */
export const FLOW_CSV_HEADER = FLOW_FIELDS.join(',');

/**
 * One JSON line (no newline) with keys in FLOW_FIELDS order and `vlan` omitted when absent. Built by
 * hand so the key order is fixed by construction, whatever order the record's properties were set in.
 */
export function flowToJson(r: FlowRecord): string {
  const vlan = r.vlan === undefined ? '' : `,"vlan":${r.vlan}`;
  return `{"start":${num(r.start)},"end":${num(r.end)},"proto":${r.proto},"src":${text(r.src)},"dst":${text(r.dst)},`
    + `"sport":${r.sport},"dport":${r.dport},"pkts":${r.pkts},"bytes":${num(r.bytes)},"rpkts":${r.rpkts},"rbytes":${num(r.rbytes)},`
    + `"flags":${r.flags},"rflags":${r.rflags},"outcome":"${r.outcome}","exporter":${exporterText(r.exporter)}${vlan}}`;
}

/** One CSV row (no newline) in FLOW_FIELDS order; `vlan` empty when absent; RFC 4180 quoting. */
export function flowToCsv(r: FlowRecord): string {
  return `${num(r.start)},${num(r.end)},${r.proto},${csvText(r.src)},${csvText(r.dst)},${r.sport},${r.dport},`
    + `${r.pkts},${num(r.bytes)},${r.rpkts},${num(r.rbytes)},${r.flags},${r.rflags},${r.outcome},${csvText(r.exporter)},`
    + `${r.vlan === undefined ? '' : r.vlan}`;
}

/**
 * A number as JavaScript prints it (shortest round trip), with a fast path for what timestamps and
 * counters mostly are: non-negative values with at most three decimals. JSON has no NaN or Infinity:
 * they would make the line invalid, so they print as null.
 */
export function num(x: number): string {
  if (x >= 0 && x < 9e12) {
    const m = Math.round(x * 1000);
    // x is exactly the decimal m / 1000: no other decimal of three or fewer places is that close,
    // so the digits below are the shortest that read back as x
    if (m / 1000 === x) {
      const whole = Math.floor(m / 1000), frac = m - whole * 1000;
      if (frac === 0) return `${whole}`;
      return frac % 100 === 0 ? `${whole}.${frac / 100}` : frac % 10 === 0 ? `${whole}.${frac < 100 ? '0' : ''}${frac / 10}` : `${whole}.${frac < 10 ? '00' : frac < 100 ? '0' : ''}${frac}`;
    }
  }
  return x - x === 0 ? `${x}` : 'null';
}

/** Addresses and file names rarely need escaping; JSON.stringify only when they do. */
function text(s: string): string {
  if (/^[\w.:\-/]*$/.test(s)) return `"${s}"`;
  // DEL, C1 and the line separators as well as what JSON escapes: no field can steer a terminal
  return JSON.stringify(s).replace(/[\u007f-\u009f\u2028\u2029]/g, (c) => `\\u${c.charCodeAt(0).toString(16).padStart(4, '0')}`);
}

// the exporter is the same for long runs of records: keep its last JSON text
let lastExporter = '';
let lastExporterJson = '""';
function exporterText(s: string): string {
  if (s !== lastExporter) {
    lastExporter = s;
    lastExporterJson = text(s);
  }
  return lastExporterJson;
}

/** RFC 4180 section 2: quote a field holding a comma, quote or line break; double inner quotes. */
function csvText(s: string): string {
  return /[",\r\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}
