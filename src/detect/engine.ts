import { FEATURE_COUNT, F } from '../window/features.js';
import type { ClosedWindow, WindowAggregator } from '../window/aggregator.js';
import type { AlertKind, Finding } from './finding.js';
import type { HostContext } from './context.js';
import { Baselines, HostModel } from './model.js';
import { thresholdsFor, DEFAULT_FLOORS, type Floors, type Thresholds } from './thresholds.js';
import { trwStep } from './trw.js';
import { volumeSurge } from './volume-surge.js';
import { fanInFlood } from './fan-in-flood.js';
import { verticalScan, horizontalScan } from './scan.js';
import { unusualDestination } from './unusual-destination.js';
import { trafficShift } from './traffic-shift.js';
import type { RuleSet } from '../rules/ruleset.js';

/** Quiet windows after which an episode closes (the alert tracker's closeAfterQuietWindows). */
export const QUIET_WINDOWS = 3;

/** One detector: one job, reads a host-window, returns findings. */
export type Detector = (ctx: HostContext) => Finding | Finding[] | null;

export const DETECTORS: Readonly<Record<string, Detector>> = {
  'volume-surge': volumeSurge,
  'fan-in-flood': fanInFlood,
  'vertical-scan': verticalScan,
  'horizontal-scan': horizontalScan,
  'unusual-destination': unusualDestination,
  'traffic-shift': trafficShift,
};

export interface EngineOptions {
  alpha: number;
  /** Floor overrides; with `rules`, the rule set's floors for each host are used instead. */
  floors?: Partial<Floors>;
  /** Detector names to run (default all). */
  enabled?: readonly string[];
  /** Models of hosts idle this long are dropped (counted); seasonal history needs days. */
  idleEvictMs?: number;
  windowMs: number;
  /** Learn only (train): detectors run and learn, their findings are dropped. */
  learnOnly?: boolean;
  /** Rule files: per-host floors, enabled detectors, allowlists and maintenance windows, rule ids. */
  rules?: RuleSet;
}

export interface EngineRunState {
  runWindows: number;
  /** End of the last window with a finding, per `kind|host|role`. */
  lastFinding: [string, number][];
  stats: DetectorEngine['stats'];
}

/**
 * Runs the detectors over each closed window and keeps every host's learned model. Hosts are learned
 * after they are tested, with anomalous values clipped, so an attack is not learned as normal.
 */
export class DetectorEngine {
  readonly models = new Map<number, HostModel>();
  readonly baselines: Baselines;
  readonly thresholds: Thresholds;
  readonly floors: Floors;
  runWindows = 0;
  readonly stats = { hostWindows: 0, findings: 0, modelsEvicted: 0 };
  private detectors: Detector[];
  private readonly values = new Float64Array(FEATURE_COUNT);
  private readonly anomalous = new Uint8Array(FEATURE_COUNT);
  private readonly idleEvictMs: number;
  private ctx: HostContext | null = null;
  /** End of the last window with a finding, per (kind, host, role). */
  private readonly lastFinding = new Map<string, number>();
  /**
   * Sees every host-window after detection and before learning (the report records feature series
   * and bands through it). Must not keep `ctx.values` or `ctx.acc` beyond the call.
   */
  observer: ((ctx: HostContext, findings: readonly Finding[]) => void) | null = null;
  /** Called with each host whose model is evicted (idle), after it went (the state store's changed hosts). */
  onEvict: ((hostId: number) => void) | null = null;

  constructor(private agg: WindowAggregator, private opts: EngineOptions) {
    this.thresholds = thresholdsFor(opts.alpha);
    this.floors = { ...DEFAULT_FLOORS, ...opts.floors };
    this.detectors = enabledDetectors(opts);
    this.idleEvictMs = opts.idleEvictMs ?? 9 * 86_400_000;
    this.baselines = new Baselines(opts.windowMs);
  }

  /**
   * Swaps the rule set between windows (a live reload): per-host floors, enabled detectors,
   * allowlists, maintenance windows and rule ids. Learned models and baselines stay as they are.
   */
  setRules(rules: RuleSet): void {
    this.opts = { ...this.opts, rules };
    this.detectors = enabledDetectors(this.opts);
  }

  onWindow(w: ClosedWindow): Finding[] {
    this.runWindows++;
    const out: Finding[] = [];
    const name = (id: number) => this.agg.addresses.name(id);
    for (const acc of w.hosts) {
      let model = this.models.get(acc.hostId);
      if (!model) { model = new HostModel(acc.hostId, this.baselines); this.models.set(acc.hostId, model); }
      const values = acc.values(this.values);
      trwStep(model, acc.pairOk, acc.pairFail, this.thresholds.trwLogUpper, this.thresholds.trwLogLower);
      this.anomalous.fill(0);
      const host = name(acc.hostId);
      const rules = this.opts.rules;
      // one context object, refilled per host-window: detectors read it during the call only
      const ctx = this.ctx ??= {
        host, hostId: acc.hostId, inside: false, windowStart: w.start, windowEnd: w.end, acc, values, model,
        thresholds: this.thresholds, floors: this.floors, runWindows: this.runWindows, name,
      };
      ctx.host = host; ctx.hostId = acc.hostId; ctx.inside = this.agg.isInsideId(acc.hostId);
      ctx.windowStart = w.start; ctx.windowEnd = w.end; ctx.acc = acc; ctx.values = values; ctx.model = model;
      ctx.thresholds = this.thresholds; ctx.floors = rules ? rules.floorsFor(host) : this.floors;
      ctx.runWindows = this.runWindows; ctx.name = name;
      const first = out.length;
      // detectors run in training too: their own state (peak envelopes, TRW, CUSUM) learns as well
      for (const d of this.detectors) {
        const r = d(ctx);
        if (!r) continue;
        for (const f of Array.isArray(r) ? r : [r]) {
          // allowlists and maintenance drop before admission, so a dropped window never opens or continues
          if (rules && !rules.allows(f)) continue;
          if (!this.admit(f, w)) continue;
          if (rules) f.rule = rules.ruleLabel(f);
          out.push(f);
          const fi = (F as Record<string, number>)[f.feature];
          if (fi !== undefined) this.anomalous[fi] = 1;
        }
      }
      if (this.observer) this.observer(ctx, out.slice(first));
      this.baselines.learn(acc.hostId, values, w.start, this.anomalous);
      if (model.activeWindows === 0) model.firstActiveStart = w.start;
      model.activeWindows++;
      model.lastActiveStart = w.start;
      this.stats.hostWindows++;
    }
    if (this.opts.learnOnly) out.length = 0;
    this.stats.findings += out.length;
    if (this.runWindows % 60 === 0) this.evict(w.start);
    return out;
  }

  /**
   * Opening versus continuing (detect/thresholds.ts): a candidate opens an episode only past z(alpha)
   * with its alpha gates held; while the same (kind, host, role) had a finding within the last
   * QUIET_WINDOWS windows (the alert tracker's closing rule) it continues at CONTINUE_Z.
   */
  private admit(f: Finding, w: ClosedWindow): boolean {
    const key = `${f.kind}|${f.host}|${f.role}`;
    const last = this.lastFinding.get(key);
    const continuing = last !== undefined && w.start - last < QUIET_WINDOWS * (w.end - w.start);
    if (!continuing && !(f.score > this.thresholds.z && f.openable !== false)) return false;
    this.lastFinding.set(key, w.end);
    return true;
  }

  /** The engine's run state beyond models and baselines (windows run, recent findings), for the state store. */
  runState(): EngineRunState {
    return { runWindows: this.runWindows, lastFinding: [...this.lastFinding], stats: { ...this.stats } };
  }

  restoreRunState(s: EngineRunState): void {
    this.runWindows = s.runWindows;
    this.lastFinding.clear();
    for (const [k, v] of s.lastFinding) this.lastFinding.set(k, v);
    Object.assign(this.stats, s.stats);
  }

  private evict(now: number): void {
    for (const [key, end] of this.lastFinding) if (now - end > 3_600_000) this.lastFinding.delete(key);
    for (const [id, m] of this.models) {
      const idle = now - m.lastActiveStart;
      // hosts seen in few windows go after a day of silence; learned hosts after idleEvictMs
      if (idle > this.idleEvictMs || (m.activeWindows < 12 && idle > 86_400_000)) {
        this.models.delete(id);
        this.stats.modelsEvicted++;
        this.onEvict?.(id);
      }
    }
  }
}

function enabledDetectors(opts: EngineOptions): Detector[] {
  const names = (opts.enabled ?? Object.keys(DETECTORS)).filter((n) => opts.rules?.enabled(n as AlertKind) ?? true);
  return names.map((n) => {
    const d = DETECTORS[n];
    if (!d) throw new Error(`unknown detector: ${n}`);
    return d;
  });
}
