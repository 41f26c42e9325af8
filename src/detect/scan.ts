import { F } from '../window/features.js';
import type { Finding } from './finding.js';
import type { HostContext } from './context.js';
import { baseEvidence, topPorts } from './evidence.js';
import { priorBand, scoreCount } from './score.js';
import { CONTINUE_Z, TRW_LOG_CONTINUE } from './thresholds.js';

/**
 * Shared scan gate: many failed attempts in this window, and either a high failure ratio or a
 * Threshold Random Walk past its upper threshold (Jung et al. 2004). Returns 2 when the gate holds at
 * the alpha-dependent TRW threshold (may open), 1 when only at the fixed one (may continue), 0 otherwise.
 */
export function scanGate(ctx: HostContext): 0 | 1 | 2 {
  const v = ctx.values;
  if (v[F.failed_out]! < ctx.floors.scanFailed) return 0;
  if (v[F.failure_ratio]! >= ctx.floors.scanFailureRatio) return 2;
  if (ctx.model.trwLog >= ctx.thresholds.trwLogUpper) return 2;
  return ctx.model.trwLog >= TRW_LOG_CONTINUE ? 1 : 0;
}

export function shapeFinding(
  ctx: HostContext, kind: 'vertical-scan' | 'horizontal-scan', f: number, floor: number,
  extras: Record<string, unknown>,
): Finding | null {
  const x = ctx.values[f]!;
  if (x < floor) return null;
  const gate = scanGate(ctx);
  if (gate === 0) return null;
  const learned = ctx.model.band(f, ctx.windowStart, ctx.thresholds.z);
  const b = learned && learned.ready ? learned : priorBand(2, 0.7, ctx.thresholds.z);
  const score = scoreCount(x, b);
  if (score <= CONTINUE_Z) return null;
  const feature = f === F.max_ports_per_peer ? 'max_ports_per_peer' : 'max_peers_per_port';
  return {
    kind, host: ctx.host, role: 'source', windowStart: ctx.windowStart, windowEnd: ctx.windowEnd,
    feature, observed: x, expected: b.expected, low: b.low, high: b.high, score,
    evidence: baseEvidence(ctx, {
      failure_ratio: ctx.values[F.failure_ratio]!, failed: ctx.values[F.failed_out]!,
      attempts: ctx.values[F.attempts_out]!, trw_log_ratio: ctx.model.trwLog, ...extras,
    }),
    rule: `${kind}/${b.ready ? 'band' : 'prior'}`,
    openable: gate === 2,
  };
}

/** vertical-scan: one source, one target, many ports, mostly failed. */
export function verticalScan(ctx: HostContext): Finding | null {
  const peer = ctx.acc.topPortsPerPeer();
  const f = shapeFinding(ctx, 'vertical-scan', F.max_ports_per_peer, ctx.floors.scanPorts, {
    peer: peer ? ctx.name(peer.key) : '',
  });
  if (f) f.evidence.top_ports = topPorts(ctx.acc.failPorts?.top(10) ?? []);
  return f;
}

/** horizontal-scan: one source, many targets, few ports, mostly failed. */
export function horizontalScan(ctx: HostContext): Finding | null {
  const port = ctx.acc.topPeersPerPort();
  const f = shapeFinding(ctx, 'horizontal-scan', F.max_peers_per_port, ctx.floors.scanPeers, {
    port: port ? port.key : 0,
  });
    return f;
}
