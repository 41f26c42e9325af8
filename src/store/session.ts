import type { Alert } from '../alert/alert.js';
import { alertToJson } from '../alert/serialize.js';
import type { Sensor } from '../sensor/sensor.js';
import type { ClosedWindow } from '../window/aggregator.js';
import { usageError } from '../cli/exit.js';
import { restoreCheckpoint, saveCheckpoint } from './checkpoint.js';
import { fromJson, toJson } from './codec.js';
import { LabelFilter, type Filtered, type LabelDecision } from './labels.js';
import { StateError, StateStore } from './store.js';

export interface SensorStateOptions {
  /** Lines suppressed by a benign label still go to the outputs (carrying `suppressed_by`). */
  showSuppressed?: boolean;
  /**
   * A live run's checkpoint interval (wall-clock ms): the learned state is also written as the first
   * window closes after each interval, so a crash loses at most that much learning. 0 or absent: only
   * at the end of the run.
   */
  checkpointEveryMs?: number;
  /**
   * Periodic checkpoints write only the hosts active (or evicted) since the last one, not every host
   * (default true; false writes every host each time, as the end-of-run checkpoint does).
   */
  incrementalCheckpoints?: boolean;
  /** Wall clock (tests). */
  now?: () => number;
}

/**
 * `--state FILE` for the commands that run the sensor. Restores the checkpoint into the sensor, passes
 * alerts through the label filter, stores each closed window's alert lines, hosts and peers in one
 * transaction, and at the end of input suspends the sensor and writes the checkpoint.
 */
export class SensorState {
  readonly store: StateStore;
  /** A checkpoint was loaded (the sensor continues a previous run). */
  restored = false;
  private filter: LabelFilter;
  private sensor: Sensor | null = null;
  private pending: Filtered[] = [];
  /** Lines stored by this run (a rerun's repeats not counted), and how many of them were suppressed. */
  readonly written = { lines: 0, suppressed: 0 };
  /** Checkpoints written by this run, and the wall-clock time of the last (NaN: none yet). */
  readonly checkpoints = { count: 0, lastAt: Number.NaN };
  private readonly now: () => number;
  private nextCheckpointAt: number;
  /** Address ids whose model or baselines changed since the last checkpoint (periodic checkpoints only). */
  private readonly changed = new Set<number>();
  /**
   * Why writing the state failed (disk full, file size limit, locked, I/O error), or null. After a
   * failure nothing more is written: alerts still reach the outputs, the file keeps its committed
   * windows, and its checkpoint stays the previous run's.
   */
  failed: string | null = null;

  private constructor(store: StateStore, private readonly opts: SensorStateOptions, readonly path: string) {
    this.store = store;
    this.filter = new LabelFilter(store.labels());
    this.now = opts.now ?? Date.now;
    const every = opts.checkpointEveryMs ?? 0;
    this.nextCheckpointAt = every > 0 ? this.now() + every : Number.POSITIVE_INFINITY;
  }

  /** Opens the state file; a file that cannot be used is a usage error (exit 2). */
  static open(path: string, opts: SensorStateOptions = {}): SensorState {
    return asUsage(() => new SensorState(StateStore.open(path), opts, path));
  }

  /** The sensor's emit: labels applied, lines kept for the window's transaction, shown ones passed on. */
  emitter(out: (a: Alert) => void): (a: Alert) => void {
    return (a) => {
      const f = this.filter.apply(a);
      this.pending.push(f);
      if (f.suppressedBy === null || this.opts.showSuppressed) out(f.alert);
    };
  }

  /** Restores the checkpoint into a sensor built with emitter() and hooks its window closes. */
  attach(sensor: Sensor): void {
    this.sensor = sensor;
    this.restored = asUsage(() => restoreCheckpoint(this.store, sensor));
    const decisions = this.store.getState('labels');
    if (decisions) this.filter = new LabelFilter(this.store.labels(), fromJson<[string, LabelDecision][]>(decisions));
    const before = sensor.onWindowClosed;
    const periodic = (this.opts.checkpointEveryMs ?? 0) > 0;
    if (periodic) sensor.engine.onEvict = (id) => { this.changed.add(id); };
    sensor.onWindowClosed = (w) => {
      if (periodic) for (const h of w.hosts) this.changed.add(h.hostId);
      // a due checkpoint goes in the window's own transaction: the file never holds one without the other
      const checkpoint = this.now() >= this.nextCheckpointAt;
      this.guarded(() => {
        this.writeWindow(w);
        if (checkpoint) this.writeCheckpoint(true);
      });
      if (checkpoint) this.nextCheckpointAt = this.now() + this.opts.checkpointEveryMs!;
      before?.(w);
    };
  }

  /** End of input: windows close, open episodes stay open, and everything is checkpointed. */
  suspend(): void {
    const sensor = this.sensor;
    if (!sensor) throw new Error('SensorState.suspend before attach');
    sensor.suspend();
    this.guarded(() => {
      this.flushAlerts();
      this.writeCheckpoint(false);
    });
  }

  private writeCheckpoint(midRun: boolean): void {
    const incremental = midRun && this.opts.incrementalCheckpoints !== false;
    saveCheckpoint(this.store, this.sensor!, midRun, incremental ? this.changed : undefined);
    // after a failed transaction nothing more is written (see `failed`): the set need not survive one
    this.changed.clear();
    this.store.putState('labels', toJson(this.filter.openDecisions()));
    this.checkpoints.count++;
    this.checkpoints.lastAt = this.now();
  }

  close(): void {
    try {
      this.store.close();
    } catch (e) {
      this.fail(e);
    }
  }

  /** One transaction; a failure rolls it back whole, is said once on stderr, and stops the writing. */
  private guarded(fn: () => void): void {
    if (this.failed) { this.pending = []; return; }
    // the figures count what was committed: a failed transaction takes its counts back with it
    const before = { ...this.written }, checkpoints = { ...this.checkpoints };
    try {
      this.store.transaction(fn);
    } catch (e) {
      Object.assign(this.written, before);
      Object.assign(this.checkpoints, checkpoints);
      this.pending = [];
      this.fail(e);
    }
  }

  private fail(e: unknown): void {
    if (this.failed) return;
    const err = e as { code?: string; message?: string };
    this.failed = `${err.code ?? 'error'}: ${String(err.message ?? e).split('\n')[0]}`;
    process.stderr.write(`tidewatch: --state ${this.path}: write failed (${this.failed}); alerts continue on the outputs; `
      + `${this.written.lines} lines of this run were stored before it; ${this.learnedStateIs()}\n`);
  }

  /** One line for the command's stderr summary. */
  summary(): string {
    return `state ${this.path}: ${this.restored ? 'continued' : 'new'}, ${this.written.lines} alert lines stored`
      + `${this.written.suppressed > 0 ? ` (${this.written.suppressed} suppressed by labels)` : ''}`
      + `${this.failed ? `; WRITE FAILED (${this.failed}): checkpoint not written, ${this.learnedStateIs()}` : ''}`;
  }

  /** Which learned state the file holds after a write failure. */
  private learnedStateIs(): string {
    return Number.isNaN(this.checkpoints.lastAt)
      ? "the learned state stays the previous run's"
      : `the learned state is this run's checkpoint of ${new Date(this.checkpoints.lastAt).toISOString()}`;
  }

  private writeWindow(w: ClosedWindow): void {
    this.flushAlerts();
    const agg = this.sensor!.aggregator;
    const name = (id: number) => agg.addresses.name(id);
    for (const acc of w.hosts) {
      const host = name(acc.hostId);
      this.store.touchHost(host, agg.isInsideId(acc.hostId), w.start);
      for (const p of acc.peersContacted()) this.store.touchPeer(host, name(p), w.start);
    }
  }

  private flushAlerts(): void {
    for (const f of this.pending) {
      if (!this.store.putAlert(f.alert, alertToJson(f.alert), f.suppressedBy)) continue;
      this.written.lines++;
      if (f.suppressedBy !== null) this.written.suppressed++;
    }
    this.pending = [];
  }
}

function asUsage<T>(fn: () => T): T {
  try {
    return fn();
  } catch (e) {
    if (e instanceof StateError) throw usageError(`--state: ${e.message}`);
    throw e;
  }
}
