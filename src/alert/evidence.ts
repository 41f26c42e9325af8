import type { Evidence, PeerCount, PortCount, SampleFlow } from '../detect/finding.js';

export const MAX_TOP_PEERS = 10;
export const MAX_TOP_PORTS = 10;
export const MAX_SAMPLE_FLOWS = 5;
/** Above this many distinct peers or ports the tallies are pruned to their largest entries. */
export const MAX_TALLY = 1000;
const PRUNE_TO = 100;

const BASE_KEYS = new Set(['top_peers', 'top_ports', 'sample_flows', 'flows', 'packets', 'bytes']);

/**
 * Evidence merged over an episode's windows: peer and port counts summed and re-ranked, the first
 * sample flows kept, totals summed. Tallies stay bounded: past MAX_TALLY distinct keys the smallest are
 * dropped, so counts of rarely seen peers in very long episodes are lower bounds.
 */
export class EvidenceAccumulator {
  private readonly peers = new Map<string, number>();
  private readonly ports = new Map<number, number>();
  private readonly samples: SampleFlow[] = [];
  private flows = 0;
  private packets = 0;
  private bytes = 0;

  /** Merges one window's evidence; returns how many tally entries were pruned (the evidence cap). */
  add(e: Evidence): number {
    for (const p of e.top_peers) this.peers.set(p.peer, (this.peers.get(p.peer) ?? 0) + p.count);
    for (const p of e.top_ports) this.ports.set(p.port, (this.ports.get(p.port) ?? 0) + p.count);
    for (const f of e.sample_flows) {
      if (this.samples.length >= MAX_SAMPLE_FLOWS) break;
      this.samples.push(f);
    }
    this.flows += e.flows;
    this.packets += e.packets;
    this.bytes += e.bytes;
    let pruned = 0;
    if (this.peers.size > MAX_TALLY) pruned += prune(this.peers, comparePeers);
    if (this.ports.size > MAX_TALLY) pruned += prune(this.ports, comparePorts);
    return pruned;
  }

  /** The merged evidence, with the extras (non-base keys) of `extrasFrom`, usually the peak finding's. */
  snapshot(extrasFrom: Evidence): Evidence {
    const out: Evidence = {
      top_peers: top(this.peers, comparePeers, MAX_TOP_PEERS).map(([peer, count]): PeerCount => ({ peer, count })),
      top_ports: top(this.ports, comparePorts, MAX_TOP_PORTS).map(([port, count]): PortCount => ({ port, count })),
      sample_flows: this.samples.slice(),
      flows: this.flows,
      packets: this.packets,
      bytes: this.bytes,
    };
    for (const k of Object.keys(extrasFrom)) if (!BASE_KEYS.has(k)) out[k] = extrasFrom[k];
    return out;
  }

  /** The full tallies (plain data), for the state store. */
  toState(): EvidenceState {
    return {
      peers: [...this.peers], ports: [...this.ports], samples: this.samples.slice(),
      flows: this.flows, packets: this.packets, bytes: this.bytes,
    };
  }

  static fromState(s: EvidenceState): EvidenceAccumulator {
    const e = new EvidenceAccumulator();
    for (const [k, v] of s.peers) e.peers.set(k, v);
    for (const [k, v] of s.ports) e.ports.set(k, v);
    e.samples.push(...s.samples);
    e.flows = s.flows;
    e.packets = s.packets;
    e.bytes = s.bytes;
    return e;
  }
}

export interface EvidenceState {
  peers: [string, number][];
  ports: [number, number][];
  samples: SampleFlow[];
  flows: number;
  packets: number;
  bytes: number;
}

/** Count descending, then key ascending, so ties rank the same on every run. */
function comparePeers(a: [string, number], b: [string, number]): number {
  return b[1] - a[1] || (a[0] < b[0] ? -1 : a[0] > b[0] ? 1 : 0);
}
function comparePorts(a: [number, number], b: [number, number]): number {
  return b[1] - a[1] || a[0] - b[0];
}

function top<K>(m: Map<K, number>, cmp: (a: [K, number], b: [K, number]) => number, n: number): [K, number][] {
  return [...m.entries()].sort(cmp).slice(0, n);
}

function prune<K>(m: Map<K, number>, cmp: (a: [K, number], b: [K, number]) => number): number {
  const keep = top(m, cmp, PRUNE_TO);
  const dropped = m.size - keep.length;
  m.clear();
  for (const [k, v] of keep) m.set(k, v);
  return dropped;
}
