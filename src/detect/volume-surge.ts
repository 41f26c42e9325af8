import { F, FEATURES } from '../window/features.js';
import type { Finding } from './finding.js';
import type { HostContext } from './context.js';
import { baseEvidence } from './evidence.js';
import { scoreCount } from './score.js';
import { CONTINUE_Z } from './thresholds.js';

const OUT = [F.bytes_out, F.pkts_out, F.flows_out] as const;
const IN = [F.bytes_in, F.pkts_in, F.flows_in] as const;

/**
 * volume-surge: bytes, packets or flows far above the host's own band, either direction. Needs a ready
 * baseline (12 windows, DESIGN.md section 6), the minimum effect size and ratio of the floors; the
 * feature with the highest score speaks for its direction.
 */
export function volumeSurge(ctx: HostContext): Finding[] {
  const out: Finding[] = [];
  const src = strongest(ctx, OUT);
  if (src) out.push(make(ctx, src, 'source'));
  const dst = strongest(ctx, IN);
  if (dst) out.push(make(ctx, dst, 'target'));
  return out;
}

interface Hit { f: number; score: number; expected: number; low: number; high: number }

function floorOf(ctx: HostContext, f: number): number {
  if (f === F.bytes_out || f === F.bytes_in) return ctx.floors.bytes;
  if (f === F.pkts_out || f === F.pkts_in) return ctx.floors.pkts;
  return ctx.floors.flows;
}

function strongest(ctx: HostContext, feats: readonly number[]): Hit | null {
  let best: Hit | null = null;
  for (const f of feats) {
    const x = ctx.values[f]!;
    if (x < floorOf(ctx, f)) continue;
    const b = ctx.model.band(f, ctx.windowStart, ctx.thresholds.z);
    if (!b || !b.ready) continue;
    if (x < ctx.floors.surgeRatio * Math.max(b.expected, 1)) continue;
    const score = scoreCount(x, b);
    if (score <= CONTINUE_Z) continue;
    if (!best || score > best.score) best = { f, score, expected: b.expected, low: b.low, high: b.high };
  }
  return best;
}

function make(ctx: HostContext, h: Hit, role: 'source' | 'target'): Finding {
  return {
    kind: 'volume-surge', host: ctx.host, role, windowStart: ctx.windowStart, windowEnd: ctx.windowEnd,
    feature: FEATURES[h.f]!, observed: ctx.values[h.f]!, expected: h.expected, low: h.low, high: h.high,
    score: h.score, evidence: baseEvidence(ctx, { ratio: ctx.values[h.f]! / Math.max(h.expected, 1) }),
    rule: 'volume-surge/band',
  };
}
