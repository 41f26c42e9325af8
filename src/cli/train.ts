import type { Command } from 'commander';
import { Sensor } from '../sensor/sensor.js';
import { SensorState } from '../store/session.js';
import { addReadThreadOption, addSensorOptions, applyLateness, parseSensorOptions, type RawSensorOptions } from './options.js';
import { describeInputs, runInputs } from './run-inputs.js';
import { formatCapCounts } from '../util/caps.js';
import { inputCapCounts, sensorCapCounts } from './cap-counts.js';
import { EXIT_INPUT, inputError } from './exit.js';

interface TrainRaw extends RawSensorOptions {
  state: string;
}

/**
 * `tidewatch train INPUT... --state DB`: learns baselines and peer history without alerting (the
 * detectors still run, for their own state), so a later `replay --state DB` alerts from its first
 * window. Runs add up: a second train continues from the first.
 */
export function register(program: Command): void {
  const cmd = program
    .command('train')
    .description('learn baselines and peer history from captures or flow exports into a state file, without alerting')
    .argument('<input...>', 'pcap, pcapng, IPFIX, NetFlow v9 or v5, CSV, JSON-lines or VPC flow log (gzip ok); - for stdin')
    .requiredOption('--state <file>', 'state file (SQLite; created with mode 0600)');
  addReadThreadOption(addSensorOptions(cmd)).action(async (inputs: string[], raw: TrainRaw) => {
    const parsed = parseSensorOptions(raw);
    const state = SensorState.open(raw.state);
    try {
      const sensor = new Sensor({ ...parsed.sensor, mode: 'replay', latenessMs: parsed.latenessMs ?? 5_000, learnOnly: true }, () => {});
      state.attach(sensor);
      sensor.aggregator.maxHosts = parsed.maxHosts;
      const { summaries, unreadable } = await runInputs(inputs, sensor.record, {
        recordsTransient: true, windowMs: parsed.sensor.windowMs, maxFlows: parsed.maxFlows, inputFormat: parsed.inputFormat, quiet: parsed.quiet, readThread: parsed.readThread,
        onFormat: (f) => applyLateness(sensor, f, parsed.latenessMs),
      });
      state.suspend();
      if (!parsed.quiet) {
        for (const l of describeInputs(summaries)) process.stderr.write(`${l}\n`);
        const st = sensor.aggregator.stats;
        process.stderr.write(`state ${raw.state}: ${state.restored ? 'continued' : 'new'}, windows ${st.windowsClosed}, `
          + `hosts ${sensor.aggregator.addresses.size}, models ${sensor.engine.models.size}, peer pairs ${sensor.aggregator.history.size}, late records ${st.late}`
          + `${st.timeOutliers > 0 ? `, records with a corrupt time ${st.timeOutliers}` : ''}\n`);
        process.stderr.write(`${formatCapCounts(sensorCapCounts(sensor, inputCapCounts(summaries)))}\n`);
      }
      if (unreadable.length === inputs.length) throw inputError(`no readable input (${unreadable.join(', ')})`);
      if (unreadable.length > 0) process.exitCode = EXIT_INPUT;
    } finally {
      state.close();
    }
  });
}
