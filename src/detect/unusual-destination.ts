import { F } from '../window/features.js';
import type { Finding } from './finding.js';
import type { HostContext } from './context.js';
import { baseEvidence } from './evidence.js';
import { scoreCount } from './score.js';
import { CONTINUE_Z } from './thresholds.js';

/**
 * unusual-destination: an inside host sends to a peer that neither it nor almost any other inside host
 * contacted in the learned history (prevalence across the population, window/aggregator.ts), with
 * volume above its own normal outbound bytes.
 */
export function unusualDestination(ctx: HostContext): Finding | null {
  if (!ctx.inside || ctx.runWindows < ctx.floors.historyWindows) return null;
  const x = ctx.values[F.new_peer_bytes]!;
  if (x < ctx.floors.newPeerBytes) return null;
  const b = ctx.model.band(F.bytes_out, ctx.windowStart, ctx.thresholds.z);
  if (!b || !b.ready) return null;
  const score = scoreCount(x, b);
  if (score <= CONTINUE_Z) return null;
  const peer = ctx.acc.newPeerTop >= 0 ? ctx.name(ctx.acc.newPeerTop) : '';
  return {
    kind: 'unusual-destination', host: ctx.host, role: 'source',
    windowStart: ctx.windowStart, windowEnd: ctx.windowEnd,
    feature: 'new_peer_bytes', observed: x, expected: b.expected, low: b.low, high: b.high,
    score,
    evidence: baseEvidence(ctx, { peer, new_peers: ctx.values[F.new_peers]! }),
    rule: 'unusual-destination/prevalence',
  };
}
