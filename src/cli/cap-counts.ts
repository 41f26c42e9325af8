import type { IngestSummary } from '../ingest/types.js';
import type { CollectorStats } from '../flowlog/collector.js';
import type { Sensor } from '../sensor/sensor.js';
import { addCount, type CapCounts } from '../util/caps.js';

/** The cap counters of what was read: flow table, export sessions, text lines, capture records. */
export function inputCapCounts(summaries: readonly IngestSummary[], into: CapCounts = {}): CapCounts {
  for (const s of summaries) {
    addCount(into, 'flows-evicted', s.problemCounts['flow-evicted']);
    addCount(into, 'templates-over-cap', s.counters['templatesOverCap']);
    addCount(into, 'pending-sets-dropped', s.counters['pendingOverCap']);
    addCount(into, 'domains-over-cap', s.problemCounts['domain-cap']);
    addCount(into, 'lines-too-long', s.problemCounts['line-too-long']);
    addCount(into, 'records-too-long', s.problemCounts['record-too-long']);
  }
  return into;
}

/** The collector's cap counters (exporters, datagrams, templates, pending sets). */
export function collectorCapCounts(c: CollectorStats, into: CapCounts = {}): CapCounts {
  addCount(into, 'exporters-over-cap', c.exportersOverCap);
  addCount(into, 'datagrams-over-cap', c.datagramsOverCap);
  addCount(into, 'templates-over-cap', c.templatesOverCap);
  addCount(into, 'pending-sets-dropped', c.pendingOverCap);
  return into;
}

/** The sensor's cap counters: hosts, peer history, sketches, evidence, alert budget. */
export function sensorCapCounts(s: Pick<Sensor, 'aggregator' | 'tracker'>, into: CapCounts = {}): CapCounts {
  addCount(into, 'hosts-over-cap', s.aggregator.stats.hostsOverCap);
  addCount(into, 'peer-pairs-forgotten', s.aggregator.history.forgotten);
  addCount(into, 'sketch-capped-host-windows', s.aggregator.stats.sketchCapped);
  addCount(into, 'evidence-pruned', s.tracker.evidencePruned);
  addCount(into, 'alerts-over-budget', s.tracker.counters.suppressedByBudget);
  return into;
}

/** Messages dropped by the syslog sinks (queue full while the receiver is away, errors, unsent at close). */
export function syslogCapCounts(targets: readonly { dropped: number }[], into: CapCounts = {}): CapCounts {
  for (const t of targets) addCount(into, 'syslog-dropped', t.dropped);
  return into;
}
