import type { Command } from 'commander';
import type { FlowSink } from '../flow/record.js';
import type { InputProblem } from '../util/problem.js';
import { escapeControls } from '../sink/console.js';
import { startCollector, type CollectorAddresses, type CollectorListen, type CollectorStats } from './collector.js';

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
    .option('--netflow-listen <HOST:PORT>', 'collect NetFlow v9 and v5 over UDP on HOST:PORT (a bare PORT binds 127.0.0.1)')
    .option('--duration <SECONDS>', 'with a listener: stop after SECONDS instead of at SIGINT/SIGTERM');
}

/** True when the options ask for a network listener. */
export function wantsCollector(opts: CollectorCliOptions): boolean {
  return Boolean(opts.ipfixListen || opts.netflowListen);
}

/** Optional hooks of a collector run. */
export interface CollectorRunHooks {
  onProblem?: (p: InputProblem) => void;
  /** Called once a second while running (a chunked writer flushes there, so live output is not held back). */
  tick?: () => void;
  /** Called once bound, with the actual addresses (port 0 picks a free port). */
  onListening?: (a: CollectorAddresses) => void;
}

/**
 * Runs the collector for `flows`: records go to `sink` as they arrive, until SIGINT/SIGTERM or
 * `--duration` seconds. Resolves with the collector's counters for the summary. Throws a one-line
 * Error for a bad option or an address that cannot be bound.
 */
export async function runCollectorForFlows(opts: CollectorCliOptions, sink: FlowSink, hooks: CollectorRunHooks = {}): Promise<CollectorStats> {
  const listen: CollectorListen = {};
  if (opts.ipfixListen) { listen.ipfixUdp = opts.ipfixListen; listen.ipfixTcp = opts.ipfixListen; }
  if (opts.netflowListen) listen.netflowUdp = opts.netflowListen;
  let seconds = Infinity;
  if (opts.duration !== undefined) {
    seconds = Number(opts.duration);
    if (!Number.isFinite(seconds) || seconds <= 0) throw new Error(`--duration ${JSON.stringify(opts.duration)}: expected a positive number of seconds`);
  }
  const handle = await startCollector(listen, sink, hooks.onProblem);
  hooks.onListening?.(handle.addresses());
  const ticker = hooks.tick ? setInterval(hooks.tick, 1000) : undefined;
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

/** `ipfix/udp 127.0.0.1:4739, ...`: what a run listens on, for stderr. */
export function formatListening(a: CollectorAddresses): string {
  const at = (x: { address: string; port: number }) => (x.address.includes(':') ? `[${x.address}]:${x.port}` : `${x.address}:${x.port}`);
  const parts: string[] = [];
  if (a.ipfixUdp) parts.push(`ipfix/udp ${at(a.ipfixUdp)}`);
  if (a.ipfixTcp) parts.push(`ipfix/tcp ${at(a.ipfixTcp)}`);
  if (a.netflowUdp) parts.push(`netflow9/udp ${at(a.netflowUdp)}`);
  return `listening on ${parts.join(', ')}`;
}

/** One line per exporter plus a total, for stderr. */
export function formatCollectorSummary(s: CollectorStats): string {
  const lines = s.exporters.map((e) =>
    `  ${escapeControls(e.exporter)} ${e.format}/${e.transport}: ${e.datagrams} datagrams, ${e.messages} messages, ${e.records} records, ${e.flows} flows, `
    + `${e.malformed} malformed, ${e.unknownTemplate} unknown-template sets, ${e.sequenceLost} lost by sequence`);
  return [`collector: ${s.flows} flows from ${s.exporters.length} exporters (${s.records} records, ${s.malformed} malformed, `
    + `${s.sequenceLost} lost by sequence${s.exportersOverCap ? `, ${s.exportersOverCap} refused over the exporter cap` : ''}`
    + `${s.datagramsOverCap ? `, ${s.datagramsOverCap} datagrams over the size cap` : ''}${s.templatesOverCap ? `, ${s.templatesOverCap} templates over the template cap` : ''}`
    + `${s.pendingOverCap ? `, ${s.pendingOverCap} data sets dropped from a full wait buffer` : ''})`, ...lines].join('\n');
}
