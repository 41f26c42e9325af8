import { HyperLogLog } from '../sketch/hll.js';
import { EntropyCounter } from '../sketch/entropy.js';
import { TopK } from '../sketch/topk.js';
import type { FlowRecord } from '../flow/record.js';
import { F, FEATURE_COUNT } from './features.js';

/** Bound on exact (peer, port) pairs per host-window; past it counts continue in `pairCount`. */
const PAIR_SET_CAP = 8192;
const SAMPLE_FLOWS = 5;
/** HyperLogLog precision of per-window distinct counts: 1.6 % standard error, exact up to 256. */
const HLL_P = 12;

/**
 * One host's accumulators for one window. Created per host per window (never per flow); the
 * structures a host with little activity never needs stay null (sparse state).
 */
export class HostAcc {
  flowsOut = 0; pktsOut = 0; bytesOut = 0;
  flowsIn = 0; pktsIn = 0; bytesIn = 0;
  /** UDP, ICMP and other non-TCP octets: floods are mostly these, routine bulk transfers are TCP. */
  nontcpOut = 0; nontcpIn = 0;
  attempts = 0; rejected = 0; unanswered = 0; synOnlyOut = 0;
  failedIn = 0; synOnlyIn = 0; icmpUnreachIn = 0;
  newPeers = 0; newPeerBytes = 0;
  /** Outcomes of attempts to (peer, port) pairs new in this window: the TRW's observations. */
  pairOk = 0; pairFail = 0;
  /** Largest new-and-rare destination by bytes this window (for unusual-destination evidence). */
  newPeerTop = -1; newPeerTopBytes = 0;

  peers: HyperLogLog | null = null;
  dports: HyperLogLog | null = null;
  sources: HyperLogLog | null = null;
  pairSet: Set<number> | null = null;
  pairCount: HyperLogLog | null = null;
  portsPerPeer: TopK | null = null;
  peersPerPort: TopK | null = null;
  entDstPorts: EntropyCounter | null = null;
  entDstAddrs: EntropyCounter | null = null;
  entSrcPorts: EntropyCounter | null = null;
  entSrcAddrs: EntropyCounter | null = null;
  topPeers: TopK | null = null;
  topPorts: TopK | null = null;
  failPorts: TopK | null = null;
  samples: FlowRecord[] = [];

  constructor(readonly hostId: number) {}

  /** The host initiated `r` to peer `peerId`. */
  asInitiator(r: FlowRecord, peerId: number, newPair: boolean): void {
    this.flowsOut++;
    this.pktsOut += r.pkts; this.bytesOut += r.bytes;
    this.pktsIn += r.rpkts; this.bytesIn += r.rbytes;
    if (r.proto !== 6) { this.nontcpOut += r.bytes; this.nontcpIn += r.rbytes; }
    (this.peers ??= new HyperLogLog(HLL_P)).add(peerId);
    (this.dports ??= new HyperLogLog(HLL_P)).add(r.dport);
    (this.entDstPorts ??= new EntropyCounter()).add(r.dport);
    (this.entDstAddrs ??= new EntropyCounter()).add(peerId);
    (this.entSrcPorts ??= new EntropyCounter()).add(r.sport);
    (this.topPeers ??= new TopK(32)).add(peerId);
    (this.topPorts ??= new TopK(32)).add(r.dport);
    const pairKey = peerId * 65536 + r.dport;
    const set = (this.pairSet ??= new Set());
    const fresh = !set.has(pairKey);
    if (fresh) {
      if (set.size < PAIR_SET_CAP) set.add(pairKey);
      (this.pairCount ??= new HyperLogLog(HLL_P)).addPair(peerId, r.dport);
      (this.portsPerPeer ??= new TopK(64)).add(peerId);
      (this.peersPerPort ??= new TopK(64)).add(r.dport);
    }
    if (isAttempt(r)) {
      if (fresh) {
        if (r.outcome === 'established') this.pairOk++;
        else if (r.outcome === 'rejected' || r.outcome === 'unanswered') this.pairFail++;
      }
      this.attempts++;
      if (r.outcome === 'rejected') this.rejected++;
      else if (r.outcome === 'unanswered') this.unanswered++;
      if (r.outcome === 'rejected' || r.outcome === 'unanswered') (this.failPorts ??= new TopK(32)).add(r.dport);
    }
    if (r.proto === 6 && (r.flags & 0x12) === 0x02 && r.rpkts === 0) this.synOnlyOut++;
    if (newPair) this.newPeers++;
    this.sample(r);
  }

  /** The host answered (or was sent) `r` from peer `peerId`. */
  asResponder(r: FlowRecord, peerId: number): void {
    this.flowsIn++;
    this.pktsIn += r.pkts; this.bytesIn += r.bytes;
    this.pktsOut += r.rpkts; this.bytesOut += r.rbytes;
    if (r.proto !== 6) { this.nontcpIn += r.bytes; this.nontcpOut += r.rbytes; }
    (this.sources ??= new HyperLogLog(HLL_P)).add(peerId);
    (this.entSrcAddrs ??= new EntropyCounter()).add(peerId);
    (this.topPeers ??= new TopK(32)).add(peerId);
    (this.topPorts ??= new TopK(32)).add(r.dport);
    if (r.outcome === 'rejected' || r.outcome === 'unanswered') this.failedIn++;
    if (r.proto === 6 && (r.flags & 0x12) === 0x02 && (r.rflags & 0x10) === 0) this.synOnlyIn++;
    if (isIcmpUnreachable(r)) this.icmpUnreachIn += r.pkts;
    this.sample(r);
  }

  private sample(r: FlowRecord): void {
    if (this.samples.length < SAMPLE_FLOWS) { this.samples.push(r); return; }
    // keep the largest flows beyond the first few: replace the smallest sample
    let min = 0;
    for (let i = 1; i < this.samples.length; i++) {
      if (size(this.samples[i]!) < size(this.samples[min]!)) min = i;
    }
    if (size(r) > size(this.samples[min]!)) this.samples[min] = r;
  }

  /** Fills `out` (length FEATURE_COUNT) with this window's feature values. */
  values(out: Float64Array): Float64Array {
    out.fill(0, 0, FEATURE_COUNT);
    out[F.flows_out] = this.flowsOut; out[F.pkts_out] = this.pktsOut; out[F.bytes_out] = this.bytesOut;
    out[F.flows_in] = this.flowsIn; out[F.pkts_in] = this.pktsIn; out[F.bytes_in] = this.bytesIn;
    out[F.nontcp_bytes_out] = this.nontcpOut; out[F.nontcp_bytes_in] = this.nontcpIn;
    out[F.distinct_peers] = this.peers?.count() ?? 0;
    out[F.distinct_dst_ports] = this.dports?.count() ?? 0;
    out[F.distinct_peer_ports] = this.pairCount?.count() ?? 0;
    out[F.max_ports_per_peer] = this.portsPerPeer?.top(1)[0]?.count ?? 0;
    out[F.max_peers_per_port] = this.peersPerPort?.top(1)[0]?.count ?? 0;
    out[F.distinct_sources] = this.sources?.count() ?? 0;
    out[F.entropy_dst_ports] = this.entDstPorts?.normalised() ?? 0;
    out[F.entropy_dst_addrs] = this.entDstAddrs?.normalised() ?? 0;
    out[F.entropy_src_ports] = this.entSrcPorts?.normalised() ?? 0;
    out[F.entropy_src_addrs] = this.entSrcAddrs?.normalised() ?? 0;
    const failed = this.rejected + this.unanswered;
    out[F.attempts_out] = this.attempts;
    out[F.failed_out] = failed;
    out[F.failure_ratio] = this.attempts > 0 ? failed / this.attempts : 0;
    out[F.syn_only_out] = this.synOnlyOut;
    out[F.failed_in] = this.failedIn;
    out[F.syn_only_in] = this.synOnlyIn;
    out[F.icmp_unreach_in] = this.icmpUnreachIn;
    out[F.new_peers] = this.newPeers;
    out[F.new_peer_bytes] = this.newPeerBytes;
    return out;
  }
}

function size(r: FlowRecord): number {
  return r.bytes + r.rbytes;
}

/** A connection attempt with a known outcome (METHODS 2.4: partial flows do not count in ratios). */
export function isAttempt(r: FlowRecord): boolean {
  if (r.outcome === 'partial' || r.outcome === 'n/a') return false;
  if (r.proto === 6) return (r.flags & 0x02) !== 0; // a later update of a long flow carries no SYN
  return r.proto === 17;
}

/** ICMP / ICMPv6 destination unreachable (RFC 792 type 3, RFC 4443 type 1); dport = type*256+code. */
export function isIcmpUnreachable(r: FlowRecord): boolean {
  return (r.proto === 1 && r.dport >> 8 === 3) || (r.proto === 58 && r.dport >> 8 === 1);
}
