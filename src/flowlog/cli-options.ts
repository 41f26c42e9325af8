import type { Command } from 'commander';
import type { FlowSink } from '../flow/record.js';
import type { InputProblem } from '../util/problem.js';
import { startCollector, type CollectorListen, type CollectorStats } from './collector.js';

/** What `addCollectorOptions` adds to a command's parsed options. */
export interface CollectorCliOptions {
  ipfixListen?: string;
  netflowListen?: string;
  duration?: string;
}

/** Adds `--ipfix-listen`, `--netflow-listen` and `--duration` to a command (used by `tidewatch flows`). */
export function addCollectorOptions(cmd: Command): Command {
  return cmd
    .option('--ipfix-listen <HOST:PORT>', 'collect IPFIX over UDP and TCP on HOST:PORT (a bare PORT binds 127.0.0.1)')
    .option('--netflow-listen <HOST:PORT>', 'collect NetFlow v9 over UDP on HOST:PORT (a bare PORT binds 127.0.0.1)')
    .option('--duration <SECONDS>', 'with a listener: stop after SECONDS instead of at SIGINT/SIGTERM');
}

/** True when the options ask for a network listener. */
export function wantsCollector(opts: CollectorCliOptions): boolean {
  return Boolean(opts.ipfixListen || opts.netflowListen);
}

/**
 * Runs the collector for `flows`: records go to `sink` as they arrive, until SIGINT/SIGTERM or
 * `--duration` seconds. `tick` is called once a second while running (a chunked writer flushes there,
 * so live output is not held back). Resolves with the collector's counters for the summary. Throws a
 * one-line Error for a bad option or an address that cannot be bound.
 */
export async function runCollectorForFlows(
  opts: CollectorCliOptions, sink: FlowSink, onProblem?: (p: InputProblem) => void, tick?: () => void,
): Promise<CollectorStats> {
  const listen: CollectorListen = {};
  if (opts.ipfixListen) { listen.ipfixUdp = opts.ipfixListen; listen.ipfixTcp = opts.ipfixListen; }
  if (opts.netflowListen) listen.netflowUdp = opts.netflowListen;
  let seconds = Infinity;
  if (opts.duration !== undefined) {
    seconds = Number(opts.duration);
    if (!Number.isFinite(seconds) || seconds <= 0) throw new Error(`--duration ${JSON.stringify(opts.duration)}: expected a positive number of seconds`);
  }
  const handle = await startCollector(listen, sink, onProblem);
  const ticker = tick ? setInterval(tick, 1000) : undefined;
  await new Promise<void>((resolve) => {
    const done = () => {
      clearTimeout(timer);
      clearInterval(ticker);
      process.off('SIGINT', done);
      process.off('SIGTERM', done);
      resolve();
    };
    const timer = Number.isFinite(seconds) ? setTimeout(done, seconds * 1000) : undefined;
    process.once('SIGINT', done);
    process.once('SIGTERM', done);
  });
  await handle.close();
  return handle.stats();
}

/** One line per exporter plus a total, for stderr. */
export function formatCollectorSummary(s: CollectorStats): string {
  const lines = s.exporters.map((e) =>
    `  ${e.exporter} ${e.format}/${e.transport}: ${e.datagrams} datagrams, ${e.messages} messages, ${e.records} records, ${e.flows} flows, `
    + `${e.malformed} malformed, ${e.unknownTemplate} unknown-template sets, ${e.sequenceLost} lost by sequence`);
  return [`collector: ${s.flows} flows from ${s.exporters.length} exporters (${s.records} records, ${s.malformed} malformed, `
    + `${s.sequenceLost} lost by sequence${s.exportersOverCap ? `, ${s.exportersOverCap} refused over the exporter cap` : ''})`, ...lines].join('\n');
}
