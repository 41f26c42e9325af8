/**
 * Every resource cap of the sensor in one list: what it bounds, its default, how to change it, what
 * happens past it and the counter that says so. The run summary (replay, flows) and the live status
 * print the counters; docs/operations.md "Caps" is this table in prose. Defaults are ours (common
 * practice, no source) unless a format fixes them.
 */

/** Names of the counters past a cap, as printed in summaries and the live status. */
export type CapCounter =
  | 'flows-evicted'
  | 'hosts-over-cap'
  | 'peer-pairs-forgotten'
  | 'sketch-capped-host-windows'
  | 'templates-over-cap'
  | 'pending-sets-dropped'
  | 'domains-over-cap'
  | 'exporters-over-cap'
  | 'datagrams-over-cap'
  | 'lines-too-long'
  | 'records-too-long'
  | 'evidence-pruned'
  | 'alerts-over-budget'
  | 'syslog-dropped';

export interface Cap {
  /** Short name of what is bounded. */
  name: string;
  /** The default, as a number of `unit`s (null: no bound unless set). */
  default: number | null;
  unit: string;
  /** The command-line option that changes it, or how it is changed otherwise. */
  option: string;
  /** What the sensor does past the cap (it never stops for it). */
  past: string;
  /** The counter in the summary; null when going past the cap refuses the input outright. */
  counter: CapCounter | null;
  /** Module that enforces it. */
  where: string;
}

export const CAPS: readonly Cap[] = [
  {
    name: 'flows held (capture flow table)', default: 2_000_000, unit: 'flows', option: '--max-flows (flows, replay, train)',
    past: 'the least recently seen flows are emitted and evicted (1/32 of the table at once)', counter: 'flows-evicted', where: 'src/flow/table.ts',
  },
  {
    name: 'hosts (distinct addresses in the window stage)', default: 2_000_000, unit: 'addresses', option: '--max-hosts (replay, train, watch)',
    past: 'known hosts are still followed; a record bringing a new address is dropped', counter: 'hosts-over-cap', where: 'src/window/aggregator.ts',
  },
  {
    name: 'peer history (host, peer) pairs per generation', default: 4_000_000, unit: 'pairs', option: 'WindowOptions.maxHistoryPairs (no CLI option)',
    past: 'the older generation is forgotten: its pairs count as new again', counter: 'peer-pairs-forgotten', where: 'src/window/pair-history.ts',
  },
  {
    name: 'sketch memory per host-window: exact (peer, port) pairs', default: 8192, unit: 'pairs', option: 'PAIR_SET_CAP (source constant)',
    past: 'pairs past it go to a HyperLogLog count only', counter: 'sketch-capped-host-windows', where: 'src/window/host-acc.ts',
  },
  {
    name: 'sketch memory per host-window: entropy keys per counter', default: 4096, unit: 'keys', option: 'EntropyCounter maxDistinct (source constant)',
    past: 'further keys go to an overflow bucket; entropy becomes an estimate', counter: 'sketch-capped-host-windows', where: 'src/sketch/entropy.ts',
  },
  {
    name: 'IPFIX / NetFlow v9 templates per exporter session', default: 4096, unit: 'templates', option: 'LIMITS.templatesPerExporter (source constant)',
    past: 'new template ids are refused; their data sets wait, then drop', counter: 'templates-over-cap', where: 'src/flowlog/session.ts',
  },
  {
    name: 'templates in total (all sessions of a collector or file)', default: 65_536, unit: 'templates', option: 'LIMITS.templatesTotal (source constant)',
    past: 'new template ids are refused', counter: 'templates-over-cap', where: 'src/flowlog/session.ts',
  },
  {
    name: 'pending data sets per (session, domain) awaiting a template', default: 64, unit: 'sets (and 1 MiB)', option: 'LIMITS.pendingSets / pendingBytes (source constants)',
    past: 'the data set is dropped', counter: 'pending-sets-dropped', where: 'src/flowlog/session.ts',
  },
  {
    name: 'observation domains per exporter', default: 1024, unit: 'domains', option: 'LIMITS.domainsPerExporter (source constant)',
    past: 'messages of further domains are skipped', counter: 'domains-over-cap', where: 'src/flowlog/session.ts',
  },
  {
    name: 'exporters (UDP address:port or TCP connections) at once', default: 4096, unit: 'exporters', option: 'CollectorCaps.maxExporters',
    past: 'datagrams and connections of further exporters are refused', counter: 'exporters-over-cap', where: 'src/flowlog/collector.ts',
  },
  {
    name: 'UDP datagram size', default: 65_535, unit: 'bytes', option: 'CollectorCaps.maxDatagramBytes',
    past: 'the datagram is dropped unread', counter: 'datagrams-over-cap', where: 'src/flowlog/collector.ts',
  },
  {
    name: 'CSV record / JSON line length', default: 1 << 20, unit: 'bytes', option: 'MAX_LINE_BYTES (source constant)',
    past: 'the line is skipped (never buffered whole) and reported with its line number', counter: 'lines-too-long', where: 'src/flowlog/textlog.ts',
  },
  {
    name: 'captured length of one packet record', default: 256 * 1024, unit: 'bytes', option: 'MAX_CAPTURED (source constant)',
    past: 'the capture stops there (the framing cannot be trusted); what came before is kept', counter: 'records-too-long', where: 'src/capture/limits.ts',
  },
  {
    name: 'rule file size', default: 1 << 20, unit: 'bytes', option: 'MAX_RULE_FILE_BYTES (source constant)',
    past: 'the rule set is refused before any input is read (exit 2)', counter: null, where: 'src/rules/source.ts',
  },
  {
    name: 'evidence tallies per episode (distinct peers, ports)', default: 1000, unit: 'entries each', option: 'MAX_TALLY (source constant)',
    past: 'pruned to the largest 100; counts of rare peers become lower bounds', counter: 'evidence-pruned', where: 'src/alert/evidence.ts',
  },
  {
    name: 'alert rate', default: null, unit: 'episodes per UTC hour', option: '--max-alerts-per-hour',
    past: 'the lowest-scoring episodes of the hour are suppressed', counter: 'alerts-over-budget', where: 'src/alert/episodes.ts',
  },
  {
    name: 'syslog queue per target', default: 1000, unit: 'messages', option: 'SyslogSinkOptions.maxQueue',
    past: 'further messages are dropped while the receiver is away', counter: 'syslog-dropped', where: 'src/sink/syslog.ts',
  },
];

export type CapCounts = Partial<Record<CapCounter, number>>;

/** Adds `n` to a counter (summing over inputs, exporters or targets). */
export function addCount(c: CapCounts, name: CapCounter, n: number | undefined): void {
  if (n !== undefined && n > 0) c[name] = (c[name] ?? 0) + n;
}

/** One summary line: `caps: none reached` or `caps reached: hosts-over-cap=12, flows-evicted=3`. */
export function formatCapCounts(c: CapCounts): string {
  const hit = Object.entries(c).filter(([, n]) => n !== undefined && n > 0);
  return hit.length === 0 ? 'caps: none reached' : `caps reached: ${hit.map(([k, n]) => `${k}=${n}`).join(', ')}`;
}
