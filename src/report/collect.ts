import type { Alert } from '../alert/alert.js';
import { alertToJson } from '../alert/serialize.js';
import type { IngestSummary } from '../ingest/types.js';
import { Sensor, type SensorOptions } from '../sensor/sensor.js';
import { latestEpisodes } from './alerts-file.js';
import type { EpisodeSpan, ReportData, ReportInput } from './data.js';
import { SeriesRecorder } from './series.js';

/** Reads the inputs into a sensor (the CLI passes runInputs, tests ingestInput); returns what was read. */
export type Feed = (sensor: Sensor) => Promise<IngestSummary[]>;

export interface CollectOptions {
  /** The options of the run that made the alerts: the re-run must see the same windows and bands. */
  sensor: Omit<SensorOptions, 'mode'>;
  title: string;
  generatedMs: number;
}

/** First pass when no alerts file is given: replays the inputs and returns the episodes raised. */
export async function replayEpisodes(sensor: Omit<SensorOptions, 'mode'>, feed: Feed): Promise<EpisodeSpan[]> {
  const alerts: Alert[] = [];
  // through the feed's serialisation, so numbers read as they would in an alerts file
  const s = new Sensor({ ...sensor, mode: 'replay' }, (a) => alerts.push(JSON.parse(alertToJson(a)) as Alert));
  await feed(s);
  s.finish();
  return latestEpisodes(alerts);
}

/**
 * Fills ReportData from the alerts of an earlier run plus a re-run of the pipeline over its input:
 * the re-run's engine observer records the series and bands of the alerted (host, feature) pairs.
 */
export async function collectReportData(episodes: readonly EpisodeSpan[], opts: CollectOptions, feed: Feed): Promise<ReportData> {
  const windowMs = opts.sensor.windowMs;
  const recorder = new SeriesRecorder(episodes, windowMs);
  const raised = new Set<string>();
  const sensor = new Sensor({ ...opts.sensor, mode: 'replay' }, (a) => raised.add(a.id));
  const active = new Set<number>(), inside = new Set<number>();
  sensor.engine.observer = (ctx, findings) => {
    active.add(ctx.hostId);
    if (ctx.inside) inside.add(ctx.hostId);
    recorder.observer(ctx, findings);
  };
  const summaries = await feed(sensor);
  sensor.finish();

  let spanStartMs = Infinity, spanEndMs = -Infinity;
  for (const s of summaries) {
    if (Number.isFinite(s.firstMs)) spanStartMs = Math.min(spanStartMs, s.firstMs);
    if (Number.isFinite(s.lastMs)) spanEndMs = Math.max(spanEndMs, s.lastMs);
  }
  for (const e of episodes) {
    spanStartMs = Math.min(spanStartMs, e.startMs);
    spanEndMs = Math.max(spanEndMs, e.endMs);
  }
  if (!Number.isFinite(spanStartMs)) spanStartMs = spanEndMs = opts.generatedMs;

  const notes: string[] = [];
  const missing = episodes.filter((e) => !raised.has(e.alert.id)).length;
  if (missing > 0) {
    notes.push(`${missing} of ${episodes.length} alerts were not raised again when the input was re-read for this report: `
      + 'they may come from other input or other options (--window, --alpha, --internal, --lateness), and their charts may show no anomaly.');
  }
  if (recorder.omittedPairs > 0) {
    notes.push(`${recorder.omittedPairs} alerted (host, feature) pairs with lower scores have no chart, to keep the page small; `
      + 'their alerts are listed with explanations and evidence.');
  }
  if (recorder.unknownFeatures.size > 0) {
    notes.push(`No chart for features that are not window features: ${[...recorder.unknownFeatures].join(', ')}.`);
  }
  return {
    title: opts.title, generatedMs: opts.generatedMs, windowMs, spanStartMs, spanEndMs,
    inputs: summaries.map(toInput),
    addresses: sensor.aggregator.addresses.size,
    activeHosts: active.size,
    insideHosts: inside.size,
    flows: summaries.reduce((n, s) => n + s.flows, 0),
    alerts: episodes.map((e) => e.alert),
    series: recorder.series(spanStartMs, spanEndMs),
    notes,
  };
}

function toInput(s: IngestSummary): ReportInput {
  const capture = s.format === 'pcap' || s.format === 'pcapng';
  return { file: s.file, format: s.format, units: capture ? s.packets : s.records, unitName: capture ? 'packets' : 'records', bytes: s.bytes, flows: s.flows };
}
