import { closeSync, openSync, writeSync } from 'node:fs';
import { FLOW_FIELDS, type FlowRecord } from '../flow/record.js';

/**
 * Writes FlowRecords as a flow-log file: JSON Lines (one object per line, keys in FlowRecord contract
 * order, `vlan` only when set), buffered into large writes. Returns the number of records written.
 */
export function writeFlowLog(path: string, records: Iterable<FlowRecord>): number {
  const fd = openSync(path, 'w');
  let pending: string[] = [];
  let size = 0;
  let n = 0;
  const flush = () => {
    if (pending.length === 0) return;
    writeSync(fd, pending.join(''));
    pending = [];
    size = 0;
  };
  try {
    for (const r of records) {
      const line = flowRecordLine(r);
      pending.push(line);
      size += line.length;
      n++;
      if (size >= 4 * 1024 * 1024) flush();
    }
    flush();
  } finally {
    closeSync(fd);
  }
  return n;
}

/** One JSON line (with the newline) for a record, keys in FLOW_FIELDS order. */
export function flowRecordLine(r: FlowRecord): string {
  const o: Record<string, unknown> = {};
  for (const k of FLOW_FIELDS) if (r[k] !== undefined) o[k] = r[k];
  return JSON.stringify(o) + '\n';
}
