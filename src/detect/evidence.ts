import type { SampleRecord } from '../window/host-acc.js';
import type { TopEntry } from '../sketch/topk.js';
import { rfc3339 } from '../util/time.js';
import type { Evidence, PeerCount, PortCount, SampleFlow } from './finding.js';
import type { HostContext } from './context.js';

const TOP = 10;

export function topPeers(list: readonly TopEntry[], name: (id: number) => string): PeerCount[] {
  return list.map((e) => ({ peer: name(e.key), count: e.count }));
}

export function topPorts(list: readonly TopEntry[]): PortCount[] {
  return list.map((e) => ({ port: e.key, count: e.count }));
}

export function sampleFlow(r: SampleRecord): SampleFlow {
  return {
    start: rfc3339(r.start), proto: r.proto, src: r.src, dst: r.dst, sport: r.sport, dport: r.dport,
    pkts: r.pkts, bytes: r.bytes, rpkts: r.rpkts, rbytes: r.rbytes, outcome: r.outcome,
  };
}

/** The common evidence of a host-window; detectors add their own extras. */
export function baseEvidence(ctx: HostContext, extras: Record<string, unknown> = {}): Evidence {
  const a = ctx.acc;
  return {
    top_peers: topPeers(a.topPeers(TOP), ctx.name),
    top_ports: topPorts(a.topPorts(TOP)),
    sample_flows: a.sampleRecords(ctx.name).map(sampleFlow),
    flows: a.flowsOut + a.flowsIn,
    packets: a.pktsOut + a.pktsIn,
    bytes: a.bytesOut + a.bytesIn,
    window_s: (ctx.windowEnd - ctx.windowStart) / 1000,
    ...extras,
  };
}
