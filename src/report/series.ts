import type { Alert } from '../alert/alert.js';
import type { HostContext } from '../detect/context.js';
import type { Finding } from '../detect/finding.js';
import { F } from '../window/features.js';
import type { EpisodeSpan, FeatureSeries } from './data.js';
import { downsample } from './downsample.js';

/** Windows of context charted before and after each episode. */
export const CONTEXT_WINDOWS = 60;
/** Plotted points per chart at most; longer stretches are downsampled. */
export const MAX_POINTS = 600;
/** Charted (host, feature) pairs at most, the highest-scoring first, so the page stays a few MB. */
export const MAX_CHARTED_PAIRS = 100;

/** One chart being recorded: a (host, feature) over one stretch of windows. */
interface Track {
  host: string;
  feature: string;
  fi: number;
  startMs: number;
  n: number;
  observed: Float64Array;
  expected: Float64Array;
  low: Float64Array;
  high: Float64Array;
  /** 1 where the band is the host's learned one. */
  learned: Uint8Array;
  /** The latest alert charted here, for the rule band where findings say nothing. */
  last: Alert;
}

/**
 * Records, during a re-run, the observed value and expected band of exactly the (host, feature) pairs
 * that alerted, over each episode plus CONTEXT_WINDOWS either side (overlapping stretches merged).
 * Attach `observer` to `sensor.engine.observer`; call `series()` after the run.
 */
export class SeriesRecorder {
  private readonly byHost = new Map<string, Track[]>();
  /** Features named by alerts that are not window features (no chart). */
  readonly unknownFeatures = new Set<string>();
  /** Alerted (host, feature) pairs left without a chart past MAX_CHARTED_PAIRS. */
  omittedPairs = 0;

  constructor(episodes: readonly EpisodeSpan[], private readonly windowMs: number) {
    const groups = new Map<string, EpisodeSpan[]>();
    for (const e of episodes) {
      const fi = (F as Record<string, number>)[e.alert.feature];
      if (fi === undefined) { this.unknownFeatures.add(e.alert.feature); continue; }
      const key = `${e.alert.host}\u0000${e.alert.feature}`;
      const g = groups.get(key);
      if (g) g.push(e); else groups.set(key, [e]);
    }
    const pad = CONTEXT_WINDOWS * windowMs;
    const peak = (g: EpisodeSpan[]) => Math.max(...g.map((e) => e.alert.score));
    const ranked = [...groups.values()].sort((a, b) => peak(b) - peak(a));
    this.omittedPairs = Math.max(0, ranked.length - MAX_CHARTED_PAIRS);
    for (const g of ranked.slice(0, MAX_CHARTED_PAIRS)) {
      g.sort((a, b) => a.startMs - b.startMs);
      const { host, feature } = g[0]!.alert;
      let cur: { start: number; end: number; last: Alert } | null = null;
      const flush = () => { if (cur) this.addTrack(host, feature, cur.start, cur.end, cur.last); };
      for (const e of g) {
        const start = this.floorToWindow(e.startMs - pad);
        const end = this.floorToWindow(e.endMs + pad + windowMs - 1);
        if (cur && start <= cur.end) { cur.end = Math.max(cur.end, end); cur.last = e.alert; continue; }
        flush();
        cur = { start, end, last: e.alert };
      }
      flush();
    }
  }

  readonly observer = (ctx: HostContext, findings: readonly Finding[]): void => {
    const tracks = this.byHost.get(ctx.host);
    if (!tracks) return;
    for (const t of tracks) {
      const i = Math.floor((ctx.windowStart - t.startMs) / this.windowMs);
      if (i < 0 || i >= t.n) continue;
      t.observed[i] = ctx.values[t.fi]!;
      const band = ctx.model.band(t.fi, ctx.windowStart, ctx.thresholds.z);
      if (band && band.ready) {
        t.expected[i] = band.expected; t.low[i] = band.low; t.high[i] = band.high;
        t.learned[i] = 1;
        continue;
      }
      // no learned band (none for this feature, or still warming up): the detector's own band, if it spoke
      const f = findings.find((x) => x.feature === t.feature);
      if (f) { t.expected[i] = f.expected; t.low[i] = f.low; t.high[i] = f.high; }
    }
  };

  /** The recorded series clipped to [spanStartMs, spanEndMs], downsampled to MAX_POINTS. */
  series(spanStartMs: number, spanEndMs: number): FeatureSeries[] {
    const out: FeatureSeries[] = [];
    const first = this.floorToWindow(spanStartMs);
    for (const tracks of this.byHost.values()) {
      for (const t of tracks) {
        const a = Math.max(0, Math.floor((first - t.startMs) / this.windowMs));
        const b = Math.min(t.n, Math.ceil((spanEndMs - t.startMs) / this.windowMs));
        if (b <= a) continue;
        fillRuleBand(t, a, b);
        let learned = 0;
        for (let i = a; i < b; i++) learned += t.learned[i]!;
        out.push(downsample({
          host: t.host, feature: t.feature, startMs: t.startMs + a * this.windowMs, stepMs: this.windowMs,
          observed: t.observed.slice(a, b), expected: t.expected.slice(a, b), low: t.low.slice(a, b), high: t.high.slice(a, b),
          bandFrom: learned === b - a ? 'baseline' : learned === 0 ? 'rule' : 'mixed', pointWindows: 1,
        }, MAX_POINTS));
      }
    }
    return out;
  }

  private addTrack(host: string, feature: string, start: number, end: number, last: Alert): void {
    const n = Math.max(1, Math.round((end - start) / this.windowMs));
    const nan = () => new Float64Array(n).fill(Number.NaN);
    const track: Track = {
      host, feature, fi: (F as Record<string, number>)[feature]!, startMs: start, n,
      observed: new Float64Array(n), expected: nan(), low: nan(), high: nan(), learned: new Uint8Array(n), last,
    };
    const list = this.byHost.get(host);
    if (list) list.push(track); else this.byHost.set(host, [track]);
  }

  private floorToWindow(t: number): number {
    return Math.floor(t / this.windowMs) * this.windowMs;
  }
}

/**
 * Windows without a learned band and without a finding show the alert's band: what the detector
 * compared against there (a fixed floor or a population prior).
 */
function fillRuleBand(t: Track, a: number, b: number): void {
  for (let i = a; i < b; i++) {
    if (!Number.isNaN(t.high[i]!)) continue;
    t.expected[i] = t.last.expected; t.low[i] = t.last.low; t.high[i] = t.last.high;
  }
}
