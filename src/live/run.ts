import type { Readable } from 'node:stream';
import type { AddressInfo } from 'node:net';
import type { AlertOutput } from '../cli/alert-output.js';
import type { FlowSink } from '../flow/record.js';
import { formatListening } from '../flowlog/cli-options.js';
import type { CollectorListen } from '../flowlog/collector.js';
import type { Sensor } from '../sensor/sensor.js';
import type { SensorState } from '../store/session.js';
import type { RuleSet } from '../rules/ruleset.js';
import { formatProblem, type InputProblem } from '../util/problem.js';
import { rfc3339 } from '../util/time.js';
import { LiveCapture, pumpStream } from './capture-stream.js';
import { startCollectorThread, type CollectorThreadHandle } from './collector-thread.js';
import { IdleClock } from './clock.js';
import { FileFollower } from './follow.js';
import { formatStatusLine, megabytes, STATUS_SCHEMA, syslogStatus, writeStatusJson, type LiveStatus } from './status.js';

/** Wall-clock period of the idleness check (ours, no source). */
export const IDLE_TICK_MS = 1000;
/** At most this many input problems are printed; the rest are counted (as replay does). */
const MAX_PRINTED_PROBLEMS = 20;

/** A listener could not be bound: nothing ran. */
export class ListenError extends Error {}

export interface LiveSources {
  /** A capture stream (stdin for `watch -`). */
  stdin?: Readable;
  /** Flow-log files to follow. */
  follow?: readonly string[];
  /** Flow-export listeners. */
  collector?: CollectorListen;
}

export interface LiveRunOptions {
  sensor: Sensor;
  output: AlertOutput;
  /** `--state`: per-window writes are hooked already; the run suspends and closes it at the end. */
  state: SensorState | null;
  sources: LiveSources;
  windowMs: number;
  /** Capture flow-table cap (`--max-flows`). */
  maxFlows?: number;
  /** Wall-clock quiet after which event time moves on by itself. */
  idleAfterMs: number;
  statusEveryMs: number;
  statusJson?: string;
  quiet: boolean;
  /** SIGHUP: loads the rule set again; an error list is refused. */
  reloadRules?: () => { ok: RuleSet } | { errors: string[] };
  /** Called with a rule set that passed, to describe it on stderr. */
  describeRules?: (r: RuleSet) => string;
  /** Lines for stderr (status, problems, notices). */
  log: (line: string) => void;
}

export interface LiveRunResult {
  /** How the run ended: a signal, or the only source (stdin) ended. */
  endedBy: 'SIGINT' | 'SIGTERM' | 'end-of-input';
  /** The stdin capture stopped on a fatal problem before any packet (not a capture). */
  stdinUnreadable: boolean;
  status: LiveStatus;
}

/**
 * A live run: sources feed the sensor as data comes, event time follows the data and moves on by
 * itself when the data stops, a status goes out every interval, SIGHUP reloads the rules, and
 * SIGINT/SIGTERM (or the end of stdin when it is the only source) close the open windows, flush the
 * alerts and the state, and end the run.
 */
export class LiveRun {
  private readonly clock: IdleClock;
  private records = 0;
  private recordsAtLastStatus = 0;
  private lastStatusWall = Date.now();
  private readonly startedWall = Date.now();
  private capture: LiveCapture | null = null;
  private stdinEnded = false;
  private readonly followers: FileFollower[] = [];
  private collector: CollectorThreadHandle | null = null;
  private printedProblems = 0;
  private problems = 0;
  private rules = { files: 0, reloads: 0, refused: 0 };

  constructor(private readonly o: LiveRunOptions) {
    this.clock = new IdleClock(o.idleAfterMs);
    this.rules.files = o.sensor.currentRules?.files.length ?? 0;
  }

  /** The sink every source writes to: counts, keeps the clock, hands the record to the sensor. */
  private readonly sink: FlowSink = (r) => {
    this.records++;
    this.clock.note(r.end);
    this.o.sensor.record(r);
  };

  /** Problems of stdin and followed files: counted here (the collector thread counts its own). */
  private readonly onProblem = (p: InputProblem): void => {
    this.problems++;
    this.printProblem(p);
  };

  private readonly printProblem = (p: InputProblem): void => {
    if (this.o.quiet) return;
    if (this.printedProblems < MAX_PRINTED_PROBLEMS) this.o.log(`tidewatch: ${formatProblem(p)}`);
    else if (this.printedProblems === MAX_PRINTED_PROBLEMS) this.o.log('tidewatch: further problems are counted in the status only');
    this.printedProblems++;
  };

  /** Starts the sources; resolves when the run has ended and everything is flushed. */
  async run(): Promise<LiveRunResult> {
    const { o } = this;
    const src = o.sources;
    let endRun!: (why: LiveRunResult['endedBy']) => void;
    const ended = new Promise<LiveRunResult['endedBy']>((r) => (endRun = r));
    const onInt = () => endRun('SIGINT');
    const onTerm = () => endRun('SIGTERM');
    const onHup = () => this.reload();
    process.on('SIGINT', onInt);
    process.on('SIGTERM', onTerm);
    process.on('SIGHUP', onHup);

    let pump: ReturnType<typeof pumpStream> | null = null;
    const followRuns: Promise<void>[] = [];
    const idle = setInterval(() => this.idleTick(), IDLE_TICK_MS);
    const status = setInterval(() => this.reportStatus(false), o.statusEveryMs);
    try {
      if (src.collector) {
        this.collector = await startCollectorThread(src.collector, this.sink, this.printProblem).catch((e: Error) => {
          throw new ListenError(e.message);
        });
        if (!o.quiet) o.log(`tidewatch: ${formatListening(this.collector.addresses())}`);
      }
      if (src.stdin) {
        const capture = new LiveCapture({
          windowMs: o.windowMs, maxFlows: o.maxFlows, file: '-', exporter: 'stdin', onProblem: this.onProblem, onPacketTime: (ms) => this.clock.note(ms),
        }, this.sink);
        this.capture = capture;
        pump = pumpStream(src.stdin, capture);
        const onlySource = !src.collector && !(src.follow && src.follow.length > 0);
        void pump.done.then((why) => {
          if (why === 'stopped') return;
          this.stdinEnded = true;
          capture.end();
          if (onlySource) endRun('end-of-input');
        });
      }
      for (const path of src.follow ?? []) {
        const f = new FileFollower(path, this.sink, {
          windowMs: o.windowMs, onProblem: this.onProblem,
          onRestart: (why) => { if (!o.quiet) o.log(`tidewatch: ${path}: ${why}, reading the new file from its start`); },
        });
        this.followers.push(f);
        followRuns.push(f.run());
      }
      this.writeStatusFile(this.status(false));

      const endedBy = await ended;
      // stop the sources first, so nothing arrives while the windows close
      pump?.stop();
      for (const f of this.followers) f.stop();
      await Promise.all(followRuns);
      await this.collector?.close();
      this.capture?.end();
      if (o.state) {
        o.state.suspend();
        o.state.close();
      } else {
        o.sensor.finish();
      }
      await o.output.close();
      const st = this.status(true);
      this.writeStatusFile(st);
      if (!o.quiet) o.log(formatStatusLine(st));
      return { endedBy, stdinUnreadable: this.stdinUnreadable(), status: st };
    } finally {
      clearInterval(idle);
      clearInterval(status);
      process.off('SIGINT', onInt);
      process.off('SIGTERM', onTerm);
      process.off('SIGHUP', onHup);
      if (src.stdin) src.stdin.pause();
    }
  }

  /** No data for a while: event time moves on by the wall time elapsed, so quiet windows close. */
  private idleTick(): void {
    const t = this.clock.tick(Date.now());
    if (Number.isNaN(t)) return;
    this.capture?.advance(t);
    this.clock.discardNotes();
    this.o.sensor.advance(t);
  }

  private reload(): void {
    const { o } = this;
    if (!o.reloadRules) return;
    const r = o.reloadRules();
    if ('errors' in r) {
      this.rules.refused++;
      o.log(`tidewatch: SIGHUP: rule set refused (${r.errors.length} error${r.errors.length === 1 ? '' : 's'}), keeping the rules in force:`);
      for (const e of r.errors) o.log(`  ${e}`);
      return;
    }
    const before = o.sensor.currentRules?.inside;
    o.sensor.setRules(r.ok);
    this.rules.reloads++;
    this.rules.files = r.ok.files.length;
    o.log(`tidewatch: SIGHUP: ${o.describeRules ? o.describeRules(r.ok) : 'rules reloaded'}`);
    if (JSON.stringify(before ?? null) !== JSON.stringify(r.ok.inside ?? null)) {
      o.log('tidewatch: SIGHUP: the inside list changed; it takes effect at the next start');
    }
  }

  private reportStatus(final: boolean): void {
    const st = this.status(final);
    if (!this.o.quiet) this.o.log(formatStatusLine(st));
    this.writeStatusFile(st);
  }

  private writeStatusFile(st: LiveStatus): void {
    if (!this.o.statusJson) return;
    try {
      writeStatusJson(this.o.statusJson, st);
    } catch (e) {
      this.o.log(`tidewatch: --status-json ${this.o.statusJson}: ${(e as Error).message}`);
    }
  }

  private stdinUnreadable(): boolean {
    const s = this.capture?.parser.summary;
    return s !== undefined && s.stopped && s.packets === 0;
  }

  /** A snapshot of the run's figures. */
  status(final: boolean): LiveStatus {
    const { sensor, output } = this.o;
    const now = Date.now();
    const secs = Math.max(1e-3, (now - this.lastStatusWall) / 1000);
    const rate = (this.records - this.recordsAtLastStatus) / secs;
    this.recordsAtLastStatus = this.records;
    this.lastStatusWall = now;
    const agg = sensor.aggregator.stats;
    const syslog = output.syslogStats();
    const col = this.collector?.stats();
    const listening: LiveStatus['listening'] = {};
    const a = this.collector?.addresses();
    if (a?.ipfixUdp) listening.ipfix_udp = addressText(a.ipfixUdp);
    if (a?.ipfixTcp) listening.ipfix_tcp = addressText(a.ipfixTcp);
    if (a?.netflowUdp) listening.netflow_udp = addressText(a.netflowUdp);
    const sources: LiveStatus['sources'] = {};
    if (this.capture) {
      const c = this.capture.parser.summary;
      sources.stdin = { packets: c.packets, flows: this.capture.table.stats.records, problems: Object.values(c.problemCounts).reduce((n, x) => n + x, 0), ended: this.stdinEnded };
    }
    if (this.followers.length > 0) sources.follow = this.followers.map((f) => ({ path: f.path, ...f.stats }));
    if (col) {
      sources.collector = {
        datagrams: col.datagrams, messages: col.messages, records: col.records, flows: col.flows, malformed: col.malformed,
        unknown_template: col.unknownTemplate, sequence_lost: col.sequenceLost, exporters: col.exporters.length,
      };
    }
    const mem = process.memoryUsage();
    const eventMs = this.clock.eventMs;
    return {
      schema: STATUS_SCHEMA,
      time: rfc3339(now),
      uptime_s: Math.round((now - this.startedWall) / 1000),
      event_time: Number.isFinite(eventMs) ? rfc3339(eventMs) : null,
      listening,
      records: this.records,
      records_per_s: Math.round(rate),
      windows_closed: agg.windowsClosed,
      hosts_tracked: sensor.engine.models.size,
      addresses: sensor.aggregator.addresses.size,
      alerts: output.total,
      drops: {
        late_records: agg.late,
        syslog: syslog.reduce((n, s) => n + s.dropped, 0),
        sequence_lost: col?.sequenceLost ?? 0,
        collector_backlog: this.collector?.backlogDropped() ?? 0,
        malformed: this.problems + (this.collector?.problemCount() ?? 0),
      },
      memory: { rss_mb: megabytes(mem.rss), heap_used_mb: megabytes(mem.heapUsed) },
      sources,
      syslog: syslogStatus(syslog),
      rules: { ...this.rules },
      ...(this.o.state ? { state: stateStatus(this.o.state) } : {}),
      final,
    };
  }
}

function stateStatus(s: SensorState): NonNullable<LiveStatus['state']> {
  const last = s.checkpoints.lastAt;
  return {
    path: s.path, lines_stored: s.written.lines, checkpoints: s.checkpoints.count,
    last_checkpoint: Number.isNaN(last) ? null : rfc3339(last), failed: s.failed,
  };
}

function addressText(x: AddressInfo): string {
  return x.address.includes(':') ? `[${x.address}]:${x.port}` : `${x.address}:${x.port}`;
}

