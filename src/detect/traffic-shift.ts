import { F, FEATURES } from '../window/features.js';
import type { Finding } from './finding.js';
import type { HostContext } from './context.js';
import { baseEvidence } from './evidence.js';
import { CONTINUE_Z } from './thresholds.js';

/** Features watched for sustained shifts: volume and the port-mix entropy. */
export const SHIFT_FEATURES = [F.bytes_out, F.flows_out, F.distinct_peers, F.entropy_dst_ports] as const;

/**
 * traffic-shift: a sustained change of level (CUSUM, Page 1954) on standardised values, both ways:
 * C+ = max(0, C+ + z - k), C- = max(0, C- - z - k), signal when either exceeds h. z is clipped to ±3 so
 * one burst cannot trip it alone. The sums do not depend on alpha (no reset at a signal; they are capped
 * at SUM_CAP and drain by k per window once the baseline has caught up), so alpha only moves h.
 * Score = sum / 3, which puts h = 3 z on the z scale of the other detectors. Needs a ready baseline.
 */
const SUM_CAP = 40;
const Z_CLIP = 3;
const STEADY_WINDOWS = 30;
const STEADY_SHARE = 0.9;
export function trafficShift(ctx: HostContext): Finding | null {
  const m = ctx.model;
  // A level shift means something only for a host with a level: inside hosts active in nearly every
  // window. Intermittent hosts make a train of large z-scores that no shift explains.
  if (!ctx.inside || m.activeWindows < STEADY_WINDOWS) return null;
  if (m.activityShare(ctx.windowStart, ctx.windowEnd - ctx.windowStart) < STEADY_SHARE) return null;
  const k = ctx.thresholds.cusumK;
  const sums = (m.cusum ??= new Float64Array(SHIFT_FEATURES.length * 2));
  let best: Finding | null = null;
  for (let i = 0; i < SHIFT_FEATURES.length; i++) {
    const f = SHIFT_FEATURES[i]!;
    const b = m.band(f, ctx.windowStart, ctx.thresholds.z);
    if (!b || !b.ready) continue;
    const x = ctx.values[f]!;
    const t = f === F.entropy_dst_ports ? x - b.expected : Math.log1p(x) - Math.log1p(b.expected);
    const z = Math.max(-Z_CLIP, Math.min(Z_CLIP, t / Math.max(b.spread, 1e-6)));
    const up = Math.min(SUM_CAP, Math.max(0, sums[2 * i]! + z - k));
    const down = Math.min(SUM_CAP, Math.max(0, sums[2 * i + 1]! - z - k));
    sums[2 * i] = up; sums[2 * i + 1] = down;
    const s = Math.max(up, down);
    if (s / 3 <= CONTINUE_Z) continue;
    if (best && best.score >= s / 3) continue;
    best = {
      kind: 'traffic-shift', host: ctx.host, role: 'source', windowStart: ctx.windowStart, windowEnd: ctx.windowEnd,
      feature: FEATURES[f]!, observed: x, expected: b.expected, low: b.low, high: b.high,
      score: s / 3,
      evidence: baseEvidence(ctx, { cusum: s, direction: up >= down ? 'up' : 'down' }),
      rule: 'traffic-shift/cusum',
    };
  }
  return best;
}
