import { renameSync, rmSync, writeFileSync } from 'node:fs';
import type { SyslogTargetStats } from '../cli/alert-output.js';

export const STATUS_SCHEMA = 'tidewatch.status/1';

/** What a live run reports on stderr every status interval and in `--status-json FILE`. */
export interface LiveStatus {
  schema: typeof STATUS_SCHEMA;
  /** Wall-clock time of the report (RFC 3339). */
  time: string;
  uptime_s: number;
  /** Event time the sensor has reached (from the data, or moved on by idleness); null before any data. */
  event_time: string | null;
  /** Bound listener addresses (`ADDR:PORT`), so a caller that asked for port 0 learns the port. */
  listening: { ipfix_udp?: string; ipfix_tcp?: string; netflow_udp?: string };
  /** Flow records handed to the sensor, in all and per second since the previous report. */
  records: number;
  records_per_s: number;
  windows_closed: number;
  /** Hosts with a learned model, and addresses interned (inside and outside). */
  hosts_tracked: number;
  addresses: number;
  /** Episodes opened (alerts with state `open`). */
  alerts: number;
  drops: {
    /** Records for windows that had already closed. */
    late_records: number;
    /** Syslog messages given up (queue full, send errors). */
    syslog: number;
    /** IPFIX records (NetFlow v9: export packets) missing by sequence numbers. */
    sequence_lost: number;
    /** Records the collector thread gave up because the sensor was too far behind (bounded backlog). */
    collector_backlog: number;
    /** Input problems (malformed datagrams, messages, packets or lines), summed over the sources. */
    malformed: number;
  };
  memory: { rss_mb: number; heap_used_mb: number };
  sources: {
    stdin?: { packets: number; flows: number; problems: number; ended: boolean };
    follow?: { path: string; records: number; files: number; rotations: number; truncations: number; problems: number }[];
    collector?: {
      datagrams: number; messages: number; records: number; flows: number; malformed: number;
      unknown_template: number; sequence_lost: number; exporters: number;
    };
  };
  syslog: { target: string; sent: number; dropped: number; reconnects: number; errors: number }[];
  rules: { files: number; reloads: number; refused: number };
  /**
   * `--state`: alert lines stored, checkpoints of the learned state written by this run and the time
   * of the last (null: none yet), and why writing stopped (null: it did not).
   */
  state?: { path: string; lines_stored: number; checkpoints: number; last_checkpoint: string | null; failed: string | null };
  /** true in the last report, written after the run closed its windows and flushed. */
  final: boolean;
}

export function syslogStatus(s: readonly SyslogTargetStats[]): LiveStatus['syslog'] {
  return s.map((x) => ({ target: x.target, sent: x.sent, dropped: x.dropped, reconnects: x.reconnects, errors: x.errors }));
}

/** The stderr line: the figures an operator watches, in one line. */
export function formatStatusLine(s: LiveStatus): string {
  const d = s.drops;
  const drops = d.late_records + d.syslog + d.sequence_lost + d.collector_backlog;
  return `status: ${s.records_per_s.toFixed(0)} records/s, ${s.windows_closed} windows closed, ${s.hosts_tracked} hosts tracked, `
    + `${s.alerts} alerts, ${drops} drops (late ${d.late_records}, syslog ${d.syslog}, lost by sequence ${d.sequence_lost}, backlog ${d.collector_backlog}), `
    + `${d.malformed} malformed, rss ${s.memory.rss_mb} MB${s.event_time ? `, event time ${s.event_time}` : ''}`;
}

/** Writes the status as JSON next to `path` and renames it into place, so a reader never sees half a file. */
export function writeStatusJson(path: string, s: LiveStatus): void {
  const tmp = `${path}.${process.pid}.tmp`;
  try {
    writeFileSync(tmp, `${JSON.stringify(s, null, 2)}\n`);
    renameSync(tmp, path);
  } catch (e) {
    rmSync(tmp, { force: true });
    throw e;
  }
}

export function megabytes(bytes: number): number {
  return Math.round(bytes / (1 << 20));
}
