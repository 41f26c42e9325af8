import type { Command } from 'commander';
import type { Alert } from '../alert/alert.js';
import type { CollectorListen } from '../flowlog/collector.js';
import { parseListen } from '../flowlog/collector.js';
import { ListenError, LiveRun } from '../live/run.js';
import { loadRules, shippedRulesDir } from '../rules/load.js';
import { Sensor } from '../sensor/sensor.js';
import { parseDuration } from '../util/time.js';
import { AlertOutput } from './alert-output.js';
import { inputError, usageError } from './exit.js';
import { addSensorOptions, EXPORT_LATENESS_CAP_MS, parseSensorOptions, type RawSensorOptions } from './options.js';
import { summarise } from './rules.js';

interface WatchRaw extends RawSensorOptions {
  out?: string; format?: string; color?: boolean; state?: string; showSuppressed?: boolean;
  syslog: string[]; follow: string[]; ipfixListen?: string; netflowListen?: string;
  statusJson?: string; statusInterval: string; idleAfter: string; checkpointInterval: string;
}

const collect = (v: string, acc: string[]): string[] => [...acc, v];

/** `tidewatch watch [-]`: the live sensor, its sources at once, alerts out as they close. */
export function register(program: Command): void {
  const cmd = program
    .command('watch')
    .description('run live: a capture on stdin, flow exports over the network and growing flow logs; alerts as windows close')
    .argument('[stdin]', '- to read a pcap or pcapng stream on stdin (e.g. from a capture tool writing to a pipe)')
    .option('--ipfix-listen <HOST:PORT>', 'collect IPFIX over UDP and TCP on HOST:PORT (a bare PORT binds 127.0.0.1; port 0 picks one)')
    .option('--netflow-listen <HOST:PORT>', 'collect NetFlow v9 and v5 over UDP on HOST:PORT (a bare PORT binds 127.0.0.1)')
    .option('--follow <file>', 'follow a growing CSV, JSON-lines or VPC flow log from its start, through rotation and truncation (repeatable)', collect, [])
    .option('--out <file>', 'also append alerts (JSON lines) to FILE, rotated by size, synced once per closed window')
    .option('--syslog <url>', 'also send alerts as RFC 5424 syslog to udp://HOST:PORT or tcp://HOST:PORT (repeatable)', collect, [])
    .option('--format <fmt>', 'stdout: jsonl or pretty (default: pretty on a terminal, jsonl otherwise)')
    .option('--no-color', 'no colour in pretty output')
    .option('--state <file>', 'continue from and save to a state file (SQLite, mode 0600); written once per closed window')
    .option('--show-suppressed', 'with --state: also output lines suppressed by a benign label (evidence suppressed_by)')
    .option('--checkpoint-interval <duration>', 'with --state: also write the learned state as a window closes this long after the last write (0: only at the stop)', '10m')
    .option('--status-json <file>', 'write the status as JSON to FILE at every status interval (written whole, then renamed into place)')
    .option('--status-interval <duration>', 'how often the status line and --status-json are written', '10s')
    .option('--idle-after <duration>', 'after this much wall-clock time without data, event time moves on with the wall clock', '2s');
  addSensorOptions(cmd).action(async (stdinArg: string | undefined, raw: WatchRaw) => {
    if (stdinArg !== undefined && stdinArg !== '-') {
      throw usageError(`watch reads a capture only from stdin (-); for a file use replay, for a growing flow log --follow ${stdinArg}`);
    }
    const collector = collectorListen(raw);
    if (stdinArg === undefined && !collector && raw.follow.length === 0) {
      throw usageError('watch needs a source: - (stdin), --ipfix-listen, --netflow-listen or --follow FILE');
    }
    const statusEveryMs = duration('--status-interval', raw.statusInterval, 100);
    const idleAfterMs = duration('--idle-after', raw.idleAfter, 0);
    const checkpointEveryMs = duration('--checkpoint-interval', raw.checkpointInterval, 0);
    const parsed = parseSensorOptions(raw);
    // flow exports arrive up to their active timeout late; a capture only reorders within seconds
    const flowSources = collector !== undefined || raw.follow.length > 0;
    const latenessMs = parsed.latenessMs ?? (flowSources ? 120_000 : 5_000);
    const output = new AlertOutput({ format: raw.format, out: raw.out, color: raw.color, syslog: raw.syslog, live: true });
    // the state store (SQLite, a native module) loads only when a state file is given
    const state = raw.state !== undefined
      ? (await import('../store/session.js')).SensorState.open(raw.state, { showSuppressed: raw.showSuppressed, checkpointEveryMs })
      : null;
    const emit = (a: Alert) => output.emit(a);
    const sensor = new Sensor({ ...parsed.sensor, mode: 'live', latenessMs }, state ? state.emitter(emit) : emit);
    sensor.aggregator.maxHosts = parsed.maxHosts;
    // an exporter with a long active timeout sends records of long flows late: lateness grows with them
    if (parsed.latenessMs === undefined && flowSources) sensor.setLateness(latenessMs, EXPORT_LATENESS_CAP_MS);
    sensor.onWindowClosed = () => output.sync();
    state?.attach(sensor);
    const log = (line: string) => { process.stderr.write(`${line}\n`); };
    const run = new LiveRun({
      sensor, output, state, windowMs: parsed.sensor.windowMs, maxFlows: parsed.maxFlows, idleAfterMs, statusEveryMs, statusJson: raw.statusJson,
      quiet: parsed.quiet, log,
      sources: { stdin: stdinArg === '-' ? process.stdin : undefined, follow: raw.follow, collector },
      reloadRules: () => loadRules(raw.rules ?? shippedRulesDir()),
      describeRules: summarise,
    });
    let result;
    try {
      result = await run.run();
    } catch (e) {
      if (!(e instanceof ListenError)) throw e;
      // nothing ran: close what was opened and stop with a usage error
      await output.close();
      state?.close();
      throw usageError(e.message);
    }
    if (result.stdinUnreadable && !flowSources) throw inputError('no readable input (-: not a pcap or pcapng stream)');
  });
}

function collectorListen(raw: WatchRaw): CollectorListen | undefined {
  if (!raw.ipfixListen && !raw.netflowListen) return undefined;
  const listen: CollectorListen = {};
  for (const [name, v] of [['--ipfix-listen', raw.ipfixListen], ['--netflow-listen', raw.netflowListen]] as const) {
    if (v === undefined) continue;
    try {
      parseListen(v);
    } catch (e) {
      throw usageError(`${name}: ${(e as Error).message}`);
    }
  }
  if (raw.ipfixListen) { listen.ipfixUdp = raw.ipfixListen; listen.ipfixTcp = raw.ipfixListen; }
  if (raw.netflowListen) listen.netflowUdp = raw.netflowListen;
  return listen;
}

function duration(name: string, text: string, minMs: number): number {
  const ms = parseDuration(text);
  if (!(ms >= minMs)) throw usageError(`${name}: expected a duration of at least ${minMs} ms, got ${text}`);
  return ms;
}
