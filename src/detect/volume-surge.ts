import { LEARN_CLIP_Z } from '../baseline/model.js';
import { F, FEATURES } from '../window/features.js';
import type { Finding } from './finding.js';
import type { HostContext } from './context.js';
import type { SurgeState } from './model.js';
import { baseEvidence } from './evidence.js';
import { scoreCount } from './score.js';
import { CONTINUE_Z } from './thresholds.js';

/** Volume features in the order of SurgeState's arrays. */
export const VOLUME = [
  F.bytes_out, F.pkts_out, F.flows_out, F.nontcp_bytes_out,
  F.bytes_in, F.pkts_in, F.flows_in, F.nontcp_bytes_in,
] as const;
const OUT = [0, 1, 2, 3] as const;
const IN = [4, 5, 6, 7] as const;
/** Octet totals, dominated by TCP bulk transfers; they open only when the surge persists. */
const BULK = new Set<number>([F.bytes_out, F.bytes_in]);
const READY_WINDOWS = 12;
const NONE: Finding[] = [];
const SCORES = new Float64Array(VOLUME.length);
/** Windows of routine history before a single window may open on its own (else it must persist). */
export const PEAK_MATURE = 60;
/** A surge that persists must still pass the routine peak by this factor. */
export const SUSTAINED_RATIO = 3;
/** Peak envelope decay per window in log1p units: a routine burst is forgotten by a factor e in 4 hours. */
export const PEAK_DECAY = 1 / 240;
/** A run of high windows this short is a burst; once it ends it joins the host's routine peaks. */
export const SHORT_BURST = 2;
/** "High" for runs and envelopes: the fixed learning edge, so alpha never changes this state. */
const HIGH_Z = LEARN_CLIP_Z;

/**
 * volume-surge: bytes, packets or flows far above the host's own band, either direction. It needs a
 * ready baseline (12 windows, DESIGN.md section 6) and the floors (minimum size and ratio). To open,
 * the value must also either exceed the host's routine peak envelope by the surge ratio once that
 * envelope has PEAK_MATURE windows behind it (a burst larger than any the host makes routinely), or
 * exceed it by SUSTAINED_RATIO right after a high window (a surge that persists). Total octets, which
 * routine TCP bulk transfers dominate, open only when persisting; non-TCP octets are their own features
 * (floods are mostly UDP and ICMP) and may open in one window, as may packets and flows. The feature
 * with the highest score speaks for its direction.
 */
export function volumeSurge(ctx: HostContext): Finding[] {
  // hosts seen in a few windows only (most outside addresses) never need the state: it starts when
  // the baseline can be trusted, and the envelope has PEAK_MATURE - 12 windows to learn before it gates
  if (ctx.model.activeWindows < READY_WINDOWS) return NONE;
  const st = (ctx.model.surge ??= newState());
  const follows = st.lastStart === ctx.windowStart - (ctx.windowEnd - ctx.windowStart);
  const scores = SCORES.fill(0);
  const out: Finding[] = [];
  const src = strongest(ctx, OUT, scores, st, follows);
  if (src) out.push(src);
  const dst = strongest(ctx, IN, scores, st, follows);
  if (dst) out.push(dst);
  remember(st, ctx, scores, follows);
  return out;
}

function newState(): SurgeState {
  const n = VOLUME.length;
  return { peak: new Float32Array(n), run: new Uint16Array(n), runMax: new Float32Array(n), last: new Float32Array(n), lastStart: Number.NaN };
}

function floorOf(ctx: HostContext, f: number): number {
  if (f === F.bytes_out || f === F.bytes_in || f === F.nontcp_bytes_out || f === F.nontcp_bytes_in) return ctx.floors.bytes;
  if (f === F.pkts_out || f === F.pkts_in) return ctx.floors.pkts;
  return ctx.floors.flows;
}

function strongest(
  ctx: HostContext, which: readonly number[], scores: Float64Array, st: SurgeState, follows: boolean,
): Finding | null {
  let best: Finding | null = null;
  const logRatio = Math.log(ctx.floors.surgeRatio);
  for (const i of which) {
    const f = VOLUME[i]!;
    const x = ctx.values[f]!;
    const b = ctx.model.band(f, ctx.windowStart, ctx.thresholds.z);
    if (!b || !b.ready) continue;
    const score = scoreCount(x, b);
    scores[i] = score;
    if (x < floorOf(ctx, f) || x < ctx.floors.surgeRatio * Math.max(b.expected, 1)) continue;
    if (score <= CONTINUE_Z) continue;
    if (best && best.score >= score) continue;
    const y = Math.log1p(x);
    const peak = st.peak[i]!;
    // a single window of TCP bulk octets is a transfer, not a flood: octet totals must persist
    const overPeak = !BULK.has(f) && ctx.model.activeWindows >= PEAK_MATURE && y > peak + logRatio;
    const sustained = follows && st.last[i]! > HIGH_Z && y > peak + Math.log(SUSTAINED_RATIO);
    best = {
      kind: 'volume-surge', host: ctx.host, role: i < OUT.length ? 'source' : 'target',
      windowStart: ctx.windowStart, windowEnd: ctx.windowEnd,
      feature: FEATURES[f]!, observed: x, expected: b.expected, low: b.low, high: b.high, score,
      evidence: baseEvidence(ctx, {
        ratio: x / Math.max(b.expected, 1),
        usual_peak: Math.round(Math.expm1(peak)),
        high_windows: follows ? st.run[i]! + 1 : 1,
      }),
      rule: 'volume-surge/band',
      openable: overPeak || sustained,
    };
  }
  return best;
}

/** After the test: runs, the routine peak envelope and last scores (every value is seen). */
function remember(st: SurgeState, ctx: HostContext, scores: Float64Array, follows: boolean): void {
  const gap = Number.isNaN(st.lastStart) ? 0 : (ctx.windowStart - st.lastStart) / (ctx.windowEnd - ctx.windowStart);
  for (let i = 0; i < VOLUME.length; i++) {
    const y = Math.log1p(ctx.values[VOLUME[i]!]!);
    const high = scores[i]! > HIGH_Z;
    let peak = st.peak[i]! - PEAK_DECAY * gap;
    if (!follows && st.run[i]! > 0) {
      // the host was silent after its run: the run ended then
      if (st.run[i]! <= SHORT_BURST && st.runMax[i]! > peak) peak = st.runMax[i]!;
      st.run[i] = 0;
    }
    if (high) {
      st.run[i]!++;
      if (st.run[i] === 1 || y > st.runMax[i]!) st.runMax[i] = y;
    } else {
      if (st.run[i]! > 0 && st.run[i]! <= SHORT_BURST && st.runMax[i]! > peak) peak = st.runMax[i]!;
      st.run[i] = 0;
      if (y > peak) peak = y;
    }
    st.peak[i] = peak;
    st.last[i] = scores[i]!;
  }
  st.lastStart = ctx.windowStart;
}
