import { F } from '../window/features.js';
import type { Finding } from './finding.js';
import type { HostContext } from './context.js';
import { baseEvidence } from './evidence.js';
import { priorBand, scoreCount } from './score.js';
import { CONTINUE_Z } from './thresholds.js';

/**
 * fan-in-flood: many sources to one target, mostly unanswered or SYN-only (RFC 4987's SYN flood; the
 * SYN/answer imbalance of Wang, Zhang, Shin 2002). Distinct sources above the target's band (or the
 * population prior while it has none) and above the floor, with most flows failed.
 */
export function fanInFlood(ctx: HostContext): Finding | null {
  const v = ctx.values;
  const sources = v[F.distinct_sources]!;
  const flowsIn = v[F.flows_in]!;
  if (sources < ctx.floors.floodSources || flowsIn === 0) return null;
  const failedShare = Math.max(v[F.failed_in]!, v[F.syn_only_in]!) / flowsIn;
  if (failedShare < ctx.floors.floodFailedShare) return null;
  // unanswered UDP is the normal state of one-way services (syslog, SNMP traps, flow export): a flood
  // carried mostly outside TCP must also be one by its packets
  if (2 * v[F.nontcp_bytes_in]! >= v[F.bytes_in]! && v[F.pkts_in]! < ctx.floors.floodPackets) return null;
  const learned = ctx.model.band(F.distinct_sources, ctx.windowStart, ctx.thresholds.z);
  const b = learned && learned.ready ? learned : priorBand(3, 0.7, ctx.thresholds.z);
  const score = scoreCount(sources, b);
  if (score <= CONTINUE_Z) return null;
  return {
    kind: 'fan-in-flood', host: ctx.host, role: 'target', windowStart: ctx.windowStart, windowEnd: ctx.windowEnd,
    feature: 'distinct_sources', observed: sources, expected: b.expected, low: b.low, high: b.high,
    score,
    evidence: baseEvidence(ctx, {
      failure_ratio: failedShare, syn_only: v[F.syn_only_in]!, unanswered_or_rejected: v[F.failed_in]!,
    }),
    rule: b.ready ? 'fan-in-flood/band' : 'fan-in-flood/prior',
  };
}
