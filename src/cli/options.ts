import { hostname } from 'node:os';
import { Option, type Command } from 'commander';
import { DEFAULT_INTERNAL, parseCidr } from '../util/addr.js';
import { parseDuration } from '../util/time.js';
import { DEFAULT_INGEST, INPUT_FORMATS, type InputFormat } from '../ingest/types.js';
import { DEFAULT_MAX_HOSTS } from '../window/aggregator.js';
import { MAX_ALPHA } from '../detect/thresholds.js';
import type { SensorOptions } from '../sensor/sensor.js';
import { usageError } from './exit.js';
import { rulesFromOption } from './rules.js';

/** Options shared by the commands that run the sensor (replay, train, watch, demo). */
export function addSensorOptions(cmd: Command): Command {
  return cmd
    .option('--window <duration>', 'window length (e.g. 60s, 5m)', '60s')
    .option('--alpha <p>', 'target false-alarm probability per host-window', '0.001')
    .option('--max-alerts-per-hour <n>', 'keep at most this many episodes per hour (highest scores)')
    .option('--internal <cidrs>', `inside networks, comma-separated (default: the rule set's inside list, else ${DEFAULT_INTERNAL.join(',')})`)
    .option('--rules <path>', 'rule file or folder (default: the shipped rules/); an invalid set stops the command')
    .option('--sensor <name>', 'sensor name carried in every alert', hostname())
    .option('--lateness <duration>', 'allowed lateness (default 5s for captures, 30m for flow exports)')
    .option('--max-flows <n>', `capture flow table: flows held at once, least recently seen evicted past it (default ${DEFAULT_INGEST.maxFlows})`)
    .option('--max-hosts <n>', `distinct addresses tracked; past it records bringing a new address are dropped, counted (default ${DEFAULT_MAX_HOSTS})`)
    .addOption(new Option('--input-format <fmt>', 'override format sniffing').choices([...INPUT_FORMATS]))
    .option('--quiet', 'no progress or summary on stderr');
}

/** For the commands that read whole files (replay, train, report): where the files are read. */
export function addReadThreadOption(cmd: Command): Command {
  return cmd.option('--no-read-thread', 'read and decode input files on the main thread (default: a second thread, beside the detectors)');
}

export interface RawSensorOptions {
  window: string; alpha: string; maxAlertsPerHour?: string; internal?: string; sensor: string;
  lateness?: string; inputFormat?: InputFormat; quiet?: boolean; rules?: string; maxFlows?: string; maxHosts?: string;
  readThread?: boolean;
}

export interface ParsedSensorOptions {
  sensor: Omit<SensorOptions, 'mode' | 'latenessMs'>;
  latenessMs: number | undefined;
  inputFormat: InputFormat | undefined;
  quiet: boolean;
  /** Files are read on a second thread (`--no-read-thread` turns it off). */
  readThread: boolean;
  /** Caps (src/util/caps.ts): capture flow table and window-stage hosts. */
  maxFlows: number;
  maxHosts: number;
}

export function parseSensorOptions(o: RawSensorOptions): ParsedSensorOptions {
  const windowMs = parseDuration(o.window);
  if (!(windowMs >= 1000) || windowMs % 1000 !== 0) throw usageError(`--window: expected whole seconds >= 1s, got ${o.window}`);
  const alpha = Number(o.alpha);
  if (!(alpha > 0 && alpha <= MAX_ALPHA)) throw usageError(`--alpha: expected a probability in (0, ${MAX_ALPHA}], got ${o.alpha}`);
  let maxAlertsPerHour: number | undefined;
  if (o.maxAlertsPerHour !== undefined) {
    maxAlertsPerHour = Number(o.maxAlertsPerHour);
    if (!Number.isInteger(maxAlertsPerHour) || maxAlertsPerHour < 1) throw usageError(`--max-alerts-per-hour: expected a positive integer, got ${o.maxAlertsPerHour}`);
  }
  const rules = rulesFromOption(o.rules);
  // an explicit --internal wins over the rule set's inside list
  const internal = o.internal !== undefined
    ? o.internal.split(',').map((s) => s.trim()).filter(Boolean)
    : rules.inside ?? DEFAULT_INTERNAL;
  for (const c of internal) if (!parseCidr(c)) throw usageError(`--internal: not a CIDR: ${c}`);
  let latenessMs: number | undefined;
  if (o.lateness !== undefined) {
    latenessMs = parseDuration(o.lateness);
    if (!(latenessMs >= 0)) throw usageError(`--lateness: not a duration: ${o.lateness}`);
  }
  return {
    sensor: { windowMs, alpha, internal, sensor: o.sensor, maxAlertsPerHour, rules },
    latenessMs, inputFormat: o.inputFormat, quiet: o.quiet === true, readThread: o.readThread !== false,
    maxFlows: positiveInt('--max-flows', o.maxFlows, DEFAULT_INGEST.maxFlows),
    maxHosts: positiveInt('--max-hosts', o.maxHosts, DEFAULT_MAX_HOSTS),
  };
}

function positiveInt(flag: string, text: string | undefined, dflt: number): number {
  if (text === undefined) return dflt;
  const n = Number(text);
  if (!Number.isSafeInteger(n) || n < 1) throw usageError(`${flag}: expected a positive integer, got ${text}`);
  return n;
}

/** Default allowed lateness by input kind (DESIGN: 5 s for captures, the export's timeout for flows). */
export function defaultLateness(format: InputFormat): number {
  return format === 'pcap' || format === 'pcapng' ? 5_000 : 120_000;
}

/** Flow-export lateness grows with the longest record seen, up to a common 30-minute active timeout. */
export const EXPORT_LATENESS_CAP_MS = 1_800_000;

/**
 * Sets the sensor's lateness for a replayed input of `format`: an explicit `--lateness` is kept as
 * given; captures get 5 s; flow exports get EXPORT_LATENESS_CAP_MS, since their records arrive when the
 * flow, or the exporter's active timeout, ends (offline, waiting costs nothing but a few open
 * windows). Live inputs start shorter and let the lateness grow with the records (`watch`).
 */
export function applyLateness(sensor: { setLateness(ms: number, adaptUpToMs?: number): void }, format: InputFormat, explicitMs?: number): void {
  if (explicitMs !== undefined) sensor.setLateness(explicitMs);
  else if (format === 'pcap' || format === 'pcapng') sensor.setLateness(defaultLateness(format));
  else sensor.setLateness(EXPORT_LATENESS_CAP_MS);
}
