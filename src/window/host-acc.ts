import { HyperLogLog } from '../sketch/hll.js';
import { EntropyCounter } from '../sketch/entropy.js';
import { TopK, type TopEntry } from '../sketch/topk.js';
import { IntSet } from '../sketch/int-set.js';
import { OUTCOMES, type FlowRecord } from '../flow/record.js';
import { F, FEATURE_COUNT } from './features.js';

/** Bound on exact (peer, port) pairs per host-window; past it counts continue in a HyperLogLog. */
export const PAIR_SET_CAP = 8192;
const SAMPLE_FLOWS = 5;
/** A sample flow as numbers: start, proto, peer id, host is the source (1/0), sport, dport, pkts, bytes, rpkts, rbytes, outcome index. */
const SAMPLE_FIELDS = 11;

/** What evidence shows of a sample flow (detect/evidence.ts). */
export type SampleRecord = Pick<FlowRecord, 'start' | 'proto' | 'src' | 'dst' | 'sport' | 'dport' | 'pkts' | 'bytes' | 'rpkts' | 'rbytes' | 'outcome'>;
/** HyperLogLog precision of per-window distinct counts: 1.6 % standard error, exact up to 256. */
const HLL_P = 12;

/**
 * A distinct count that is exact while its histogram holds every key and continues in a HyperLogLog
 * once the histogram is full (seeded with the keys it held): most host-windows never need the sketch.
 */
function distinctOf(h: EntropyCounter, hll: HyperLogLog | null): number {
  return hll ? hll.count() : h.distinct;
}

function spill(h: EntropyCounter): HyperLogLog {
  const hll = new HyperLogLog(HLL_P);
  h.forEach((key) => hll.add(key));
  return hll;
}

/**
 * Counts per key with their maximum: exact in a histogram while it has room; keys arriving after it is
 * full go to a Space-Saving top-k (Metwally et al. 2005), so a heavy key that shows up late is still
 * found. The maximum is that of both parts; ties go to the smaller key, as TopK.top orders them.
 */
class MaxCount {
  private readonly exact = new EntropyCounter();
  private overflow: TopK | null = null;
  private maxKey = -1;
  private max = 0;
  add(key: number): void {
    const c = this.exact.add(key);
    if (c === 0) (this.overflow ??= new TopK(64)).add(key);
    else if (c > this.max || (c === this.max && key < this.maxKey)) { this.max = c; this.maxKey = key; }
  }
  maxCount(): number {
    return this.overflow ? Math.max(this.max, this.overflow.maxCount()) : this.max;
  }
  top(): TopEntry | undefined {
    const o = this.overflow?.top(1)[0];
    if (o && (o.count > this.max || (o.count === this.max && o.key < this.maxKey))) return o;
    return this.max > 0 ? { key: this.maxKey, count: this.max, error: 0 } : undefined;
  }
  reset(): void {
    this.exact.reset(); this.overflow = null; this.maxKey = -1; this.max = 0;
  }
}

/**
 * Flows of one role as they come, four words an entry (key, key, key, weight), appended in order. A
 * host-window's histograms are filled from it when they are read, into shared scratch histograms that
 * stay in cache from host to host: updating each host's own tables per flow cost a cache miss in each
 * of them, thousands of hosts apart. Past LOG_CAP entries a role counts into its own tables directly.
 */
const LOG_CAP = 2048;
/** Log words kept by a pooled set (bigger logs are given back). */
const POOLED_LOG_WORDS = 1024;
class FlowLog {
  private words = new Uint32Array(4 * 16);
  length = 0;
  /** True while flows go to the log, false once the role counts into its own histograms. */
  logging = true;

  push(a: number, b: number, c: number, n: number): void {
    const o = 4 * this.length;
    if (o === this.words.length) {
      const w = new Uint32Array(2 * o);
      w.set(this.words);
      this.words = w;
    }
    const w = this.words;
    w[o] = a; w[o + 1] = b; w[o + 2] = c; w[o + 3] = n;
    this.length++;
  }

  /** Hands every entry to `count`, in order. */
  forEach(count: (a: number, b: number, c: number, n: number) => void): void {
    const w = this.words;
    for (let i = 0; i < this.length; i++) count(w[4 * i]!, w[4 * i + 1]!, w[4 * i + 2]!, w[4 * i + 3]!);
  }

  reset(): void {
    this.length = 0;
    this.logging = true;
    if (this.words.length > POOLED_LOG_WORDS) this.words = new Uint32Array(4 * 16);
  }
}

/** Empties a histogram; tables past `maxSlots` are given back (0: keep every table, for the scratch). */
function clearCounter(h: EntropyCounter, maxSlots: number): void {
  if (maxSlots > 0) h.trim(maxSlots);
  else h.reset();
}

/** An initiator's histograms: destination ports, destination addresses, source ports. */
class InitiatorCounts {
  entDstPorts = new EntropyCounter();
  entDstAddrs = new EntropyCounter();
  entSrcPorts = new EntropyCounter();
  peersHll: HyperLogLog | null = null;
  dportsHll: HyperLogLog | null = null;
  readonly count = (peer: number, dport: number, sport: number, n: number): void => {
    this.entDstPorts.add(dport, n);
    this.entDstAddrs.add(peer, n);
    this.entSrcPorts.add(sport, n);
    if (this.peersHll) this.peersHll.add(peer);
    else if (this.entDstAddrs.saturated) (this.peersHll = spill(this.entDstAddrs)).add(peer);
    if (this.dportsHll) this.dportsHll.add(dport);
    else if (this.entDstPorts.saturated) (this.dportsHll = spill(this.entDstPorts)).add(dport);
  };
  get saturated(): boolean {
    return this.entDstPorts.saturated || this.entDstAddrs.saturated || this.entSrcPorts.saturated;
  }
  /** Empty again (see clearCounter). */
  clear(maxSlots: number): void {
    clearCounter(this.entDstPorts, maxSlots); clearCounter(this.entDstAddrs, maxSlots); clearCounter(this.entSrcPorts, maxSlots);
    this.peersHll = null; this.dportsHll = null;
  }
}

/** A responder's histograms: source addresses, and the local ports it was reached on (evidence). */
class ResponderCounts {
  entSrcAddrs = new EntropyCounter();
  localPorts = new EntropyCounter();
  sourcesHll: HyperLogLog | null = null;
  readonly count = (peer: number, port: number, _unused: number, n: number): void => {
    this.entSrcAddrs.add(peer, n);
    this.localPorts.add(port, n);
    if (this.sourcesHll) this.sourcesHll.add(peer);
    else if (this.entSrcAddrs.saturated) (this.sourcesHll = spill(this.entSrcAddrs)).add(peer);
  };
  clear(maxSlots: number): void {
    clearCounter(this.entSrcAddrs, maxSlots); clearCounter(this.localPorts, maxSlots);
    this.sourcesHll = null;
  }
}

/** Shared scratch histograms, filled from one role's log at a time and emptied after. */
const initiatorScratch = new InitiatorCounts();
const responderScratch = new ResponderCounts();

interface Counts {
  readonly count: (a: number, b: number, c: number, n: number) => void;
  clear(maxSlots: number): void;
}

/** One role's histograms behind its flow log (see FlowLog). */
class LoggedCounts<C extends Counts> {
  private readonly log = new FlowLog();
  constructor(private readonly own: C, private readonly scratch: C) {}

  /** One flow (or n of the same keys) into the log, or into the own histograms once past LOG_CAP. */
  add(a: number, b: number, c: number, n: number): void {
    if (!this.log.logging) { this.own.count(a, b, c, n); return; }
    this.log.push(a, b, c, n);
    if (this.log.length >= LOG_CAP) { this.log.forEach(this.own.count); this.log.logging = false; }
  }

  /** Runs fn on the histograms with every flow counted (the scratch ones, filled from the log). */
  with<T>(fn: (c: C) => T): T {
    if (!this.log.logging) return fn(this.own);
    this.log.forEach(this.scratch.count);
    try { return fn(this.scratch); } finally { this.scratch.clear(0); }
  }

  /** The own histograms once counting directly, else null (a log holds too few keys to fill one). */
  get direct(): C | null {
    return this.log.logging ? null : this.own;
  }

  reset(): void {
    this.own.clear(POOLED_SLOTS);
    this.log.reset();
  }
}

/** The largest count of distinct ports per peer and of distinct peers per port, with their keys. */
interface PairShape { portsPerPeer: TopEntry | undefined; peersPerPort: TopEntry | undefined }

/** Scratch counters for pair shapes, shared: a shape is worked out for one host at a time. */
const shapePeers = new EntropyCounter(PAIR_SET_CAP);
const shapePorts = new EntropyCounter(PAIR_SET_CAP);

/** The key with the largest count, ties to the smaller key (as TopK.top orders them). */
function largest(h: EntropyCounter): TopEntry | undefined {
  let key = -1, count = 0;
  h.forEach((k, c) => { if (c > count || (c === count && k < key)) { key = k; count = c; } });
  return count > 0 ? { key, count, error: 0 } : undefined;
}

/** The sets and sketches of one role, created only once a host shows a second distinct key. */
class InitiatorSets {
  pairSet = new IntSet();
  /** Exact pair count is pairSet.size until the set is full; then this sketch counts. */
  pairHll: HyperLogLog | null = null;
  /**
   * Distinct ports per peer and peers per port: worked out from the exact pair set when asked (once
   * per window, with scratch tables that stay in cache), and counted as pairs come only once the set
   * is full (seeded with every pair it holds).
   */
  private shape: PairShape | null = null;
  portsPerPeer: MaxCount | null = null;
  peersPerPort: MaxCount | null = null;
  private readonly hist = new LoggedCounts(new InitiatorCounts(), initiatorScratch);

  addFlow(peer: number, dport: number, sport: number, n: number): void {
    this.hist.add(peer, dport, sport, n);
  }

  counts<T>(fn: (c: InitiatorCounts) => T): T {
    return this.hist.with(fn);
  }

  /** A histogram filled up (its counts past that are estimates). */
  get saturated(): boolean {
    return this.hist.direct?.saturated ?? false;
  }

  /** A new (peer, port) pair: counted online once the exact set is full. */
  newPair(peer: number, dport: number): void {
    this.shape = null;
    if (this.pairSet.size < PAIR_SET_CAP) return;
    if (!this.portsPerPeer) {
      const pp = new MaxCount(), pq = new MaxCount();
      this.pairSet.forEach((k) => { pp.add(Math.floor(k / 65536)); pq.add(k % 65536); });
      this.portsPerPeer = pp; this.peersPerPort = pq;
      // the pair that filled the set is in it already
      if (this.pairSet.has(peer * 65536 + dport)) return;
    }
    this.portsPerPeer.add(peer);
    this.peersPerPort!.add(dport);
  }

  pairShape(): PairShape {
    if (this.shape) return this.shape;
    if (this.portsPerPeer) {
      this.shape = { portsPerPeer: this.portsPerPeer.top(), peersPerPort: this.peersPerPort!.top() };
    } else {
      this.pairSet.forEach((k) => { shapePeers.add(Math.floor(k / 65536)); shapePorts.add(k % 65536); });
      this.shape = { portsPerPeer: largest(shapePeers), peersPerPort: largest(shapePorts) };
      shapePeers.reset(); shapePorts.reset();
    }
    return this.shape;
  }

  /** Empty again for the pool, tables past POOLED_SLOTS given back. */
  reset(): void {
    this.pairSet.trim(POOLED_SLOTS); this.pairHll = null;
    this.shape = null; this.portsPerPeer = null; this.peersPerPort = null;
    this.hist.reset();
  }
}

class ResponderSets {
  private readonly hist = new LoggedCounts(new ResponderCounts(), responderScratch);

  addFlow(peer: number, port: number, n: number): void {
    this.hist.add(peer, port, 0, n);
  }

  counts<T>(fn: (c: ResponderCounts) => T): T {
    return this.hist.with(fn);
  }

  get saturated(): boolean {
    return this.hist.direct?.entSrcAddrs.saturated ?? false;
  }

  reset(): void {
    this.hist.reset();
  }
}

/**
 * Sets of closed windows, reused by the next windows: typed-array allocation was the window stage's
 * largest cost. Bounded in number, and each pooled set keeps tables of at most POOLED_SLOTS slots
 * (bigger ones, from a busy host, are given back), so the pool holds at most about
 * POOL_CAP x 15 KB (120 MB) whatever the traffic was.
 */
const POOL_CAP = 8192;
const POOLED_SLOTS = 256;
const initiatorPool: InitiatorSets[] = [];
const responderPool: ResponderSets[] = [];
const topPool: TopK[] = [];

/**
 * One host's accumulators for one window. Created per host per window (never per flow). Sparse state:
 * while a host's flows in a role all share one key (the common case for most hosts in a window) the
 * key lives inline; sets, sketches and top-k lists appear only with a second distinct key.
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

  // inline first key of each role (-1: none yet) and how many flows carried it
  private oPeer = -1; private oDport = -1; private oSport = -1; private oCount = 0;
  private iPeer = -1; private iPort = -1; private iCount = 0;
  private out: InitiatorSets | null = null;
  private inn: ResponderSets | null = null;
  /** Destination ports of failed attempts (scan evidence). */
  failPorts: TopK | null = null;
  /**
   * Sample flows (the largest few of the window) copied as numbers, made with the first sample (most
   * hosts keep none): holding the records themselves kept tens of thousands of them alive through
   * every window, and each young-generation collection copied them.
   */
  private sampleData: Float64Array | null = null;
  private sampleCount = 0;
  /** Index of the smallest sample once all SAMPLE_FLOWS are taken. */
  private smallest = 0;

  constructor(public hostId: number) {}

  /** Makes a released accumulator new again for another host (the window stage pools them). */
  reuse(hostId: number): this {
    this.hostId = hostId;
    this.flowsOut = 0; this.pktsOut = 0; this.bytesOut = 0;
    this.flowsIn = 0; this.pktsIn = 0; this.bytesIn = 0;
    this.nontcpOut = 0; this.nontcpIn = 0;
    this.attempts = 0; this.rejected = 0; this.unanswered = 0; this.synOnlyOut = 0;
    this.failedIn = 0; this.synOnlyIn = 0; this.icmpUnreachIn = 0;
    this.newPeers = 0; this.newPeerBytes = 0;
    this.pairOk = 0; this.pairFail = 0;
    this.newPeerTop = -1; this.newPeerTopBytes = 0;
    this.oPeer = -1; this.oDport = -1; this.oSport = -1; this.oCount = 0;
    this.iPeer = -1; this.iPort = -1; this.iCount = 0;
    this.sampleCount = 0;
    return this;
  }

  /**
   * The host initiated `r` to peer `peerId`; `share` of its packets and octets fall in this window
   * (records longer than a window spread over the windows they cover).
   */
  asInitiator(r: FlowRecord, peerId: number, newPair: boolean, share = 1): void {
    this.flowsOut++;
    this.volumeAsInitiator(r, share);
    let fresh: boolean;
    if (this.out === null && (this.oCount === 0 || (peerId === this.oPeer && r.dport === this.oDport && r.sport === this.oSport))) {
      fresh = this.oCount === 0;
      if (fresh) { this.oPeer = peerId; this.oDport = r.dport; this.oSport = r.sport; }
      this.oCount++;
    } else {
      fresh = this.addOut(this.initiatorSets(), peerId, r.dport, r.sport, 1);
    }
    if (isAttempt(r)) {
      if (fresh) {
        if (r.outcome === 'established') this.pairOk++;
        else if (r.outcome === 'rejected' || r.outcome === 'unanswered') this.pairFail++;
      }
      this.attempts++;
      if (r.outcome === 'rejected') this.rejected++;
      else if (r.outcome === 'unanswered') this.unanswered++;
      if (r.outcome === 'rejected' || r.outcome === 'unanswered') (this.failPorts ??= topPool.pop() ?? new TopK(32)).add(r.dport);
    }
    if (r.proto === 6 && (r.flags & 0x12) === 0x02 && r.rpkts === 0) this.synOnlyOut++;
    if (newPair) this.newPeers++;
    this.sample(r, peerId, 1);
  }

  /** Packets and octets of `r` in this window for its initiator, scaled by `share`. */
  volumeAsInitiator(r: FlowRecord, share: number): void {
    this.pktsOut += r.pkts * share; this.bytesOut += r.bytes * share;
    this.pktsIn += r.rpkts * share; this.bytesIn += r.rbytes * share;
    if (r.proto !== 6) { this.nontcpOut += r.bytes * share; this.nontcpIn += r.rbytes * share; }
  }

  /** Packets and octets of `r` in this window for its responder, scaled by `share`. */
  volumeAsResponder(r: FlowRecord, share: number): void {
    this.pktsIn += r.pkts * share; this.bytesIn += r.bytes * share;
    this.pktsOut += r.rpkts * share; this.bytesOut += r.rbytes * share;
    if (r.proto !== 6) { this.nontcpIn += r.bytes * share; this.nontcpOut += r.rbytes * share; }
  }

  /** The host answered (or was sent) `r` from peer `peerId`; `share` as for asInitiator. */
  asResponder(r: FlowRecord, peerId: number, share = 1): void {
    this.flowsIn++;
    this.volumeAsResponder(r, share);
    if (this.inn === null && (this.iCount === 0 || (peerId === this.iPeer && r.dport === this.iPort))) {
      if (this.iCount === 0) { this.iPeer = peerId; this.iPort = r.dport; }
      this.iCount++;
    } else {
      this.addIn(this.responderSets(), peerId, r.dport, 1);
    }
    if (r.outcome === 'rejected' || r.outcome === 'unanswered') this.failedIn++;
    if (r.proto === 6 && (r.flags & 0x12) === 0x02 && (r.rflags & 0x10) === 0) this.synOnlyIn++;
    if (isIcmpUnreachable(r)) this.icmpUnreachIn += r.pkts;
    this.sample(r, peerId, 0);
  }

  /** Returns true when (peer, dport) was new in this window. */
  private addOut(s: InitiatorSets, peer: number, dport: number, sport: number, n: number): boolean {
    s.addFlow(peer, dport, sport, n);
    const pairKey = peer * 65536 + dport;
    if (s.pairSet.size < PAIR_SET_CAP) {
      if (!s.pairSet.add(pairKey)) return false;
    } else {
      if (s.pairSet.has(pairKey)) return false;
      // the exact set is full: keys past it may repeat, the sketch tells them apart
      if (!s.pairHll) { const h = new HyperLogLog(HLL_P); s.pairSet.forEach((k) => h.addPair(Math.floor(k / 65536), k % 65536)); s.pairHll = h; }
      s.pairHll.addPair(peer, dport);
    }
    s.newPair(peer, dport);
    return true;
  }

  private addIn(s: ResponderSets, peer: number, port: number, n: number): void {
    s.addFlow(peer, port, n);
  }

  private initiatorSets(): InitiatorSets {
    if (this.out) return this.out;
    const s = initiatorPool.pop() ?? new InitiatorSets();
    this.out = s;
    if (this.oCount > 0) this.addOut(s, this.oPeer, this.oDport, this.oSport, this.oCount);
    return s;
  }

  private responderSets(): ResponderSets {
    if (this.inn) return this.inn;
    const s = responderPool.pop() ?? new ResponderSets();
    this.inn = s;
    if (this.iCount > 0) this.addIn(s, this.iPeer, this.iPort, this.iCount);
    return s;
  }

  private sample(r: FlowRecord, peerId: number, hostIsSource: number): void {
    // a host's first flow of the window is not kept: most hosts make one flow and never alert
    if (this.flowsOut + this.flowsIn < 2) return;
    const data = (this.sampleData ??= new Float64Array(SAMPLE_FLOWS * SAMPLE_FIELDS));
    let slot: number;
    if (this.sampleCount < SAMPLE_FLOWS) {
      slot = this.sampleCount++;
    } else {
      // keep the largest flows beyond the first few: replace the smallest sample
      if (!(size(r) > sampleSize(data, this.smallest))) return;
      slot = this.smallest;
    }
    const o = slot * SAMPLE_FIELDS;
    data[o] = r.start; data[o + 1] = r.proto; data[o + 2] = peerId; data[o + 3] = hostIsSource;
    data[o + 4] = r.sport; data[o + 5] = r.dport; data[o + 6] = r.pkts; data[o + 7] = r.bytes;
    data[o + 8] = r.rpkts; data[o + 9] = r.rbytes; data[o + 10] = OUTCOMES.indexOf(r.outcome);
    if (this.sampleCount === SAMPLE_FLOWS) {
      let min = 0;
      for (let i = 1; i < SAMPLE_FLOWS; i++) if (sampleSize(data, i) < sampleSize(data, min)) min = i;
      this.smallest = min;
    }
  }

  /** The window's sample flows, in slot order, with addresses named by `name`. */
  sampleRecords(name: (id: number) => string): SampleRecord[] {
    const out: SampleRecord[] = [];
    const data = this.sampleData;
    if (!data) return out;
    for (let i = 0; i < this.sampleCount; i++) {
      const o = i * SAMPLE_FIELDS;
      const host = name(this.hostId), peer = name(data[o + 2]!);
      const hostIsSource = data[o + 3] === 1;
      out.push({
        start: data[o]!, proto: data[o + 1]!, src: hostIsSource ? host : peer, dst: hostIsSource ? peer : host,
        sport: data[o + 4]!, dport: data[o + 5]!, pkts: data[o + 6]!, bytes: data[o + 7]!, rpkts: data[o + 8]!,
        rbytes: data[o + 9]!, outcome: OUTCOMES[data[o + 10]!]!,
      });
    }
    return out;
  }

  /** True when a bounded set or counter of this window filled up (counts past it are estimates). */
  get sketchCapped(): boolean {
    const o = this.out, i = this.inn;
    return (o !== null && (o.pairSet.size >= PAIR_SET_CAP || o.saturated)) || (i !== null && i.saturated);
  }

  /**
   * The window is over and its findings are made: hands the sets back for reuse. The accumulator must
   * not be used afterwards (the window stage calls this after the window's consumers returned).
   */
  release(): void {
    if (this.out && initiatorPool.length < POOL_CAP) { this.out.reset(); initiatorPool.push(this.out); }
    if (this.inn && responderPool.length < POOL_CAP) { this.inn.reset(); responderPool.push(this.inn); }
    if (this.failPorts && topPool.length < POOL_CAP) { this.failPorts.reset(); topPool.push(this.failPorts); }
    this.out = null; this.inn = null; this.failPorts = null;
  }

  /** Distinct peers this host initiated to in this window (exact up to the pair-set bound). */
  peersContacted(): Set<number> {
    const peers = new Set<number>();
    if (this.out) this.out.pairSet.forEach((k) => peers.add(Math.floor(k / 65536)));
    else if (this.oCount > 0) peers.add(this.oPeer);
    return peers;
  }

  /** Calls fn with each source peer of this window as responder (those the histogram holds when saturated). */
  forEachSource(fn: (peer: number) => void): void {
    if (this.inn) this.inn.counts((c) => c.entSrcAddrs.forEach((peer) => fn(peer)));
    else if (this.iCount > 0) fn(this.iPeer);
  }

  /** Runs fn on both roles' histograms at once (either absent when the role has no sets). */
  private bothCounts<T>(fn: (o: InitiatorCounts | undefined, i: ResponderCounts | undefined) => T): T {
    const inner = (o: InitiatorCounts | undefined) => (this.inn ? this.inn.counts((i) => fn(o, i)) : fn(o, undefined));
    return this.out ? this.out.counts((o) => inner(o)) : inner(undefined);
  }

  /** Top peers over both roles, by flows (exact while the histograms hold every key). */
  topPeers(k: number): TopEntry[] {
    return this.bothCounts((o, i) => merged(k, o?.entDstAddrs, this.oPeer, this.out ? 0 : this.oCount, i?.entSrcAddrs, this.iPeer, this.inn ? 0 : this.iCount));
  }

  /** Top ports (destination ports as initiator, local ports as responder), by flows. */
  topPorts(k: number): TopEntry[] {
    return this.bothCounts((o, i) => merged(k, o?.entDstPorts, this.oDport, this.out ? 0 : this.oCount, i?.localPorts, this.iPort, this.inn ? 0 : this.iCount));
  }

  /** The peer this host sent to on the most distinct ports, with that count. */
  topPortsPerPeer(): TopEntry | undefined {
    if (this.out) return this.out.pairShape().portsPerPeer;
    return this.oCount > 0 ? { key: this.oPeer, count: 1, error: 0 } : undefined;
  }

  /** The destination port this host sent to the most distinct peers on, with that count. */
  topPeersPerPort(): TopEntry | undefined {
    if (this.out) return this.out.pairShape().peersPerPort;
    return this.oCount > 0 ? { key: this.oDport, count: 1, error: 0 } : undefined;
  }

  /** Fills `out` (length FEATURE_COUNT) with this window's feature values. */
  values(out: Float64Array): Float64Array {
    out.fill(0, 0, FEATURE_COUNT);
    out[F.flows_out] = this.flowsOut; out[F.pkts_out] = this.pktsOut; out[F.bytes_out] = this.bytesOut;
    out[F.flows_in] = this.flowsIn; out[F.pkts_in] = this.pktsIn; out[F.bytes_in] = this.bytesIn;
    out[F.nontcp_bytes_out] = this.nontcpOut; out[F.nontcp_bytes_in] = this.nontcpIn;
    const o = this.out;
    if (o) {
      o.counts((c) => {
        out[F.distinct_peers] = distinctOf(c.entDstAddrs, c.peersHll);
        out[F.distinct_dst_ports] = distinctOf(c.entDstPorts, c.dportsHll);
        out[F.entropy_dst_ports] = c.entDstPorts.normalised();
        out[F.entropy_dst_addrs] = c.entDstAddrs.normalised();
        out[F.entropy_src_ports] = c.entSrcPorts.normalised();
      });
      out[F.distinct_peer_ports] = o.pairHll ? o.pairHll.count() : o.pairSet.size;
      const shape = o.pairShape();
      out[F.max_ports_per_peer] = shape.portsPerPeer?.count ?? 0;
      out[F.max_peers_per_port] = shape.peersPerPort?.count ?? 0;
    } else if (this.oCount > 0) {
      out[F.distinct_peers] = 1; out[F.distinct_dst_ports] = 1; out[F.distinct_peer_ports] = 1;
      out[F.max_ports_per_peer] = 1; out[F.max_peers_per_port] = 1;
    }
    if (this.inn) {
      this.inn.counts((c) => {
        out[F.distinct_sources] = distinctOf(c.entSrcAddrs, c.sourcesHll);
        out[F.entropy_src_addrs] = c.entSrcAddrs.normalised();
      });
    } else if (this.iCount > 0) {
      out[F.distinct_sources] = 1;
    }
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

/** Top k of two roles' counts (a histogram, or an inline key with its count), summed by key. */
function merged(
  k: number, a: EntropyCounter | undefined, aKey: number, aCount: number,
  b: EntropyCounter | undefined, bKey: number, bCount: number,
): TopEntry[] {
  const sum = new Map<number, number>();
  const put = (key: number, n: number) => { if (n > 0) sum.set(key, (sum.get(key) ?? 0) + n); };
  // 2k candidates per side: a key just outside one side's top k can still make the merged top k
  if (a) for (const e of a.top(2 * k)) put(e.key, e.count);
  put(aKey, aCount);
  if (b) for (const e of b.top(2 * k)) put(e.key, e.count);
  put(bKey, bCount);
  return [...sum].map(([key, count]) => ({ key, count, error: 0 }))
    .sort((x, y) => y.count - x.count || x.key - y.key).slice(0, k);
}

function size(r: FlowRecord): number {
  return r.bytes + r.rbytes;
}

function sampleSize(data: Float64Array, slot: number): number {
  return data[slot * SAMPLE_FIELDS + 7]! + data[slot * SAMPLE_FIELDS + 9]!;
}

/**
 * A connection attempt with a known outcome (METHODS 2.4: partial flows do not count in ratios): TCP
 * with its SYN, UDP, and an ICMP echo request, whose flow holds its replies (a ping sweep's probes).
 */
export function isAttempt(r: FlowRecord): boolean {
  if (r.outcome === 'partial' || r.outcome === 'n/a') return false;
  if (r.proto === 6) return (r.flags & 0x02) !== 0; // a later update of a long flow carries no SYN
  return r.proto === 17 || (r.proto === 1 && r.dport >> 8 === 8) || (r.proto === 58 && r.dport >> 8 === 128);
}

/** ICMP / ICMPv6 destination unreachable (RFC 792 type 3, RFC 4443 type 1); dport = type*256+code. */
export function isIcmpUnreachable(r: FlowRecord): boolean {
  return (r.proto === 1 && r.dport >> 8 === 3) || (r.proto === 58 && r.dport >> 8 === 1);
}
