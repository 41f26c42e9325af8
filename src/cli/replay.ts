import type { Command } from 'commander';
import type { Alert } from '../alert/alert.js';
import { Sensor } from '../sensor/sensor.js';
import type { WindowAggregator } from '../window/aggregator.js';
import { AlertOutput } from './alert-output.js';
import { addReadThreadOption, addSensorOptions, applyLateness, parseSensorOptions, type RawSensorOptions } from './options.js';
import { describeInputs, runInputs } from './run-inputs.js';
import { EXIT_ALERTS, EXIT_INPUT, inputError } from './exit.js';
import { Progress } from './progress.js';
import { formatCapCounts } from '../util/caps.js';
import { inputCapCounts, sensorCapCounts } from './cap-counts.js';

interface ReplayRaw extends RawSensorOptions {
  out?: string; format?: string; color?: boolean; failOnAlert?: boolean; state?: string; showSuppressed?: boolean;
}

/** `tidewatch replay INPUT...`: the main job, captures or flow files in, the alert feed out. */
export function register(program: Command): void {
  const cmd = program
    .command('replay')
    .description('replay captures or flow exports at full speed and write the alert feed (JSON lines)')
    .argument('<input...>', 'pcap, pcapng, IPFIX, NetFlow v9 or v5, CSV, JSON-lines or VPC flow log (gzip ok); - for stdin')
    .option('--out <file>', 'also append alerts (JSON lines) to FILE')
    .option('--format <fmt>', 'jsonl or pretty (default: pretty on a terminal, jsonl otherwise)')
    .option('--no-color', 'no colour in pretty output')
    .option('--fail-on-alert', 'exit 1 when any alert was raised')
    .option('--state <file>', 'continue from and save to a state file (SQLite, mode 0600): baselines, peers, open episodes, alerts, labels')
    .option('--show-suppressed', 'with --state: also output lines suppressed by a benign label (evidence suppressed_by)');
  addReadThreadOption(addSensorOptions(cmd)).action(async (inputs: string[], raw: ReplayRaw) => {
    const parsed = parseSensorOptions(raw);
    const output = new AlertOutput({ format: raw.format, out: raw.out, color: raw.color });
    const progress = new Progress({ quiet: parsed.quiet });
    // alerts printed on the terminal must not land on the progress line
    const emit = (a: Alert) => { progress.clear(); output.emit(a); };
    // the state store (SQLite, a native module) loads only when a state file is given
    const state = raw.state !== undefined
      ? (await import('../store/session.js')).SensorState.open(raw.state, { showSuppressed: raw.showSuppressed })
      : null;
    const sensor = new Sensor({ ...parsed.sensor, mode: 'replay', latenessMs: parsed.latenessMs ?? 5_000 }, state ? state.emitter(emit) : emit);
    sensor.onWindowClosed = () => output.sync();
    state?.attach(sensor);
    sensor.aggregator.maxHosts = parsed.maxHosts;
    const { summaries, unreadable } = await runInputs(inputs, sensor.record, {
      recordsTransient: true, windowMs: parsed.sensor.windowMs, maxFlows: parsed.maxFlows, inputFormat: parsed.inputFormat, quiet: parsed.quiet, readThread: parsed.readThread, progress,
      onFormat: (f) => applyLateness(sensor, f, parsed.latenessMs),
    });
    // with state, open episodes continue in the next run instead of closing here
    if (state) { state.suspend(); state.close(); } else sensor.finish();
    await output.close();
    if (!parsed.quiet) {
      for (const l of describeInputs(summaries)) process.stderr.write(`${l}\n`);
      const st = sensor.aggregator.stats;
      const kinds = [...output.counts.entries()].map(([k, n]) => `${k}=${n}`).join(', ');
      process.stderr.write(`windows ${st.windowsClosed}, hosts ${sensor.aggregator.addresses.size}, late records ${st.late}`
        + `${st.timeOutliers > 0 ? `, records with a corrupt time ${st.timeOutliers}` : ''}`
        + `${broadcastNote(sensor.aggregator)}; `
        + `alerts ${output.total}${kinds ? ` (${kinds})` : ''}; suppressed by budget ${sensor.tracker.counters.suppressedByBudget}\n`);
      process.stderr.write(`${formatCapCounts(sensorCapCounts(sensor, inputCapCounts(summaries)))}\n`);
      const outside = noInsideNote(sensor);
      if (outside) process.stderr.write(`${outside}\n`);
      if (state) process.stderr.write(`${state.summary()}\n`);
    }
    if (unreadable.length === inputs.length) throw inputError(`no readable input (${unreadable.join(', ')})`);
    if (unreadable.length > 0) process.exitCode = EXIT_INPUT;
    else if (raw.failOnAlert && output.total > 0) process.exitCode = EXIT_ALERTS;
  });
}

/**
 * Addresses came and none was inside: unusual-destination and the inside/outside split need the
 * watched network's prefixes (a site numbered from public space, say).
 */
function noInsideNote(sensor: Sensor): string | null {
  const agg = sensor.aggregator;
  if (agg.insideHosts > 0 || agg.addresses.size === 0) return null;
  return `note: none of the ${agg.addresses.size} addresses is inside ${sensor.opts.internal.join(',')}; `
    + 'pass --internal with the watched network\'s prefixes (unusual-destination looks at inside hosts only)';
}

/** `, subnet broadcasts set aside N (ADDR, ...)` when the window stage found any (aggregator.isBroadcastSink). */
function broadcastNote(agg: WindowAggregator): string {
  const n = agg.stats.broadcastSinks;
  if (n === 0) return '';
  return `, host-windows of subnet broadcasts set aside ${n} (${[...agg.broadcastNames].join(', ')}${agg.moreBroadcastNames ? ', ...' : ''})`;
}
