import type { Finding } from '../detect/finding.js';
import { CidrSet } from '../util/addr.js';

/** `A -> B` (A sends to B) or `A <-> B` (either way); each side an address or a CIDR. */
export interface PeerPair { from: CidrSet; to: CidrSet; both: boolean }

export type AllowReason = 'host' | 'pair' | 'port';

/** Inclusive port range. */
export interface PortRange { lo: number; hi: number }

/** Parses `A -> B` / `A <-> B`; null when malformed (callers say why). */
export function parsePeerPair(s: string, cidrOk: (c: string) => boolean): PeerPair | null {
  const m = /^\s*(\S+)\s*(<->|->)\s*(\S+)\s*$/.exec(s);
  if (!m || !cidrOk(m[1]!) || !cidrOk(m[3]!)) return null;
  return { from: new CidrSet([m[1]!]), to: new CidrSet([m[3]!]), both: m[2] === '<->' };
}

/**
 * Hosts, ports and peer pairs whose findings are dropped. A finding is judged by its host and by its
 * evidence: the top peer (most flows in the window) and the top port. A pair `A -> B` covers a
 * finding on A as source whose top peer is in B, and one on B as target whose top peer is in A.
 */
export class Allowlist {
  constructor(
    readonly hosts: CidrSet | null,
    readonly ports: readonly PortRange[],
    readonly pairs: readonly PeerPair[],
  ) {}

  get size(): number {
    return (this.hosts?.cidrs.length ?? 0) + this.ports.length + this.pairs.length;
  }

  /** Why the finding is allowlisted, or null. */
  match(f: Finding): AllowReason | null {
    if (this.hosts?.has(f.host)) return 'host';
    const peer = f.evidence.top_peers[0]?.peer;
    if (peer !== undefined && this.pairs.some((p) => pairCovers(p, f, peer))) return 'pair';
    const port = f.evidence.top_ports[0]?.port;
    if (port !== undefined && this.ports.some((r) => port >= r.lo && port <= r.hi)) return 'port';
    return null;
  }
}

function pairCovers(p: PeerPair, f: Finding, peer: string): boolean {
  const forward = p.from.has(f.host) && p.to.has(peer);
  const backward = p.to.has(f.host) && p.from.has(peer);
  if (p.both) return forward || backward;
  return f.role === 'source' ? forward : backward;
}
