import type { FlowRecord } from '../flow/record.js';
import type { Alert } from '../alert/alert.js';
import { EpisodeTracker } from '../alert/episodes.js';
import { WindowAggregator, type ClosedWindow } from '../window/aggregator.js';
import { DetectorEngine, QUIET_WINDOWS } from '../detect/engine.js';
import type { Floors } from '../detect/thresholds.js';
import { CidrSet } from '../util/addr.js';
import type { RuleSet } from '../rules/ruleset.js';

export interface SensorOptions {
  windowMs: number;
  latenessMs: number;
  alpha: number;
  internal: readonly string[];
  sensor: string;
  mode: 'replay' | 'live';
  maxAlertsPerHour?: number;
  floors?: Partial<Floors>;
  enabled?: readonly string[];
  /** train: learn baselines and peer history, emit nothing. */
  learnOnly?: boolean;
  /** Rule files (rules/ruleset.ts); absent = the built-in defaults. */
  rules?: RuleSet;
}

/**
 * The whole detection path wired once: FlowRecord -> windows -> detectors -> episodes -> alerts.
 * `replay`, `watch`, `train` and `demo` all drive this; only their sources and sinks differ.
 */
export class Sensor {
  readonly aggregator: WindowAggregator;
  readonly engine: DetectorEngine;
  readonly tracker: EpisodeTracker;
  /** Called after each closed window's alerts were emitted (sinks sync here). */
  onWindowClosed: ((w: ClosedWindow) => void) | null = null;
  private rules: RuleSet | undefined;
  /**
   * Start of the current run of windows without any input, NaN when the last window had input (kept
   * in the state's checkpoint: a gap may span a restart).
   */
  gapStart = Number.NaN;

  constructor(readonly opts: SensorOptions, emit: (a: Alert) => void) {
    this.aggregator = new WindowAggregator(
      { windowMs: opts.windowMs, latenessMs: opts.latenessMs, internal: new CidrSet(opts.internal) },
      (w) => this.closeWindow(w),
    );
    this.engine = new DetectorEngine(this.aggregator, {
      alpha: opts.alpha, windowMs: opts.windowMs, floors: opts.floors, enabled: opts.enabled, learnOnly: opts.learnOnly,
      rules: opts.rules,
    });
    this.rules = opts.rules;
    // the tracker maps scores with the built-in limits; a rule set's own limits re-map here
    const remap = (a: Alert): void => {
      const rules = this.rules;
      emit(rules && !rules.hasDefaultSeverity() ? { ...a, severity: rules.severity(a.score) } : a);
    };
    this.tracker = new EpisodeTracker({
      windowMs: opts.windowMs, sensor: opts.sensor, mode: opts.mode,
      maxAlertsPerHour: opts.maxAlertsPerHour, closeAfterQuietWindows: QUIET_WINDOWS,
    }, remap);
  }

  /** The rule set in force (a reload may replace the one given at construction). */
  get currentRules(): RuleSet | undefined {
    return this.rules;
  }

  /**
   * Replaces the rule set between records (SIGHUP in `watch`): floors, enabled detectors, allowlists,
   * maintenance windows, rule ids and severity limits. The inside list stays the one the sensor was
   * built with (the aggregator has already sorted hosts by it).
   */
  setRules(rules: RuleSet): void {
    this.rules = rules;
    this.engine.setRules(rules);
  }

  /**
   * One flow record in. Nothing of `r` is kept past the call (the window stage copies the numbers it
   * needs, sample flows included), so callers may hand in one object filled anew each time.
   */
  readonly record = (r: FlowRecord): void => {
    this.aggregator.add(r);
  };

  /** Allowed lateness; `adaptUpToMs` lets it grow with the longest record seen (flow exports). */
  setLateness(ms: number, adaptUpToMs = 0): void {
    this.aggregator.setLateness(ms, adaptUpToMs);
  }

  /** Moves event time forward without data (live idleness). */
  advance(tMs: number): void {
    this.aggregator.advance(tMs);
  }

  /** End of input: close every window and every episode. */
  finish(): void {
    this.aggregator.finish();
    this.tracker.finish();
  }

  /**
   * End of this input with state kept (`--state`): every window closes (the data is complete up to
   * here) but open episodes stay open, to continue in the next run restored from the state.
   */
  suspend(): void {
    this.aggregator.finish();
  }

  private closeWindow(w: ClosedWindow): void {
    // A window with no record at all is missing input (a capture or exporter gap), not silence
    // (METHODS.md 7.7): baselines tolerate up to 10 % of them before restarting their warm-up.
    if (w.hosts.length === 0) {
      if (Number.isNaN(this.gapStart)) this.gapStart = w.start;
    } else if (!Number.isNaN(this.gapStart)) {
      this.engine.baselines.markMissing(this.gapStart, w.start);
      this.gapStart = Number.NaN;
    }
    const findings = this.engine.onWindow(w);
    this.tracker.observe(findings, w.start, w.end);
    this.onWindowClosed?.(w);
  }
}
