import type { FlowRecord } from '../flow/record.js';
import type { CidrSet } from '../util/addr.js';
import { broadcastHostBits, isNonHost, parseIpv4 } from '../util/addr.js';
import { MAX_FORWARD_JUMP_MS } from '../flow/time-guard.js';
import { AddressTable, type AddressTableSnapshot } from './intern.js';
import { PairHistory, type PairHistorySnapshot } from './pair-history.js';
import { HostAcc } from './host-acc.js';

/** Released host accumulators kept for reuse. */
const ACC_POOL_CAP = 65_536;

export interface WindowOptions {
  windowMs: number;
  /** Watermark = latest event time seen minus this (5 s for captures, the active timeout for exports). */
  latenessMs: number;
  internal: CidrSet;
  /** A new peer stays "new" for unusual-destination this long after first contact. */
  newPeerMemoryMs?: number;
  /** Pairs kept per generation in the peer history (memory bound). */
  maxHistoryPairs?: number;
  /** Distinct addresses tracked (memory bound); past it records bringing a new address are dropped. */
  maxHosts?: number;
}

/** Default host cap (src/util/caps.ts): ids must stay below PairHistory's 2^26. */
export const DEFAULT_MAX_HOSTS = 2_000_000;

/** One closed window: every host active in it, in both roles. */
export interface ClosedWindow {
  start: number;
  end: number;
  hosts: HostAcc[];
}

interface RecentPeer { peer: number; first: number }

/**
 * The hosts of one open window: a list in arrival order and an id-indexed table of positions, so a
 * record finds its hosts' accumulators by array index rather than by hashing. Reused window after
 * window (clearing touches only the hosts it held).
 */
class HostBucket {
  readonly hosts: HostAcc[] = [];
  /** at[id] = position in `hosts` + 1; 0 = not in this window. */
  private at = new Int32Array(1024);

  get(id: number): HostAcc | undefined {
    const i = id < this.at.length ? this.at[id]! : 0;
    return i > 0 ? this.hosts[i - 1] : undefined;
  }

  put(a: HostAcc): void {
    const id = a.hostId;
    if (id >= this.at.length) {
      let n = this.at.length;
      while (n <= id) n *= 2;
      const at = new Int32Array(n);
      at.set(this.at);
      this.at = at;
    }
    this.hosts.push(a);
    this.at[id] = this.hosts.length;
  }

  clear(): void {
    for (const h of this.hosts) this.at[h.hostId] = 0;
    this.hosts.length = 0;
  }
}
/** Broadcast-sink addresses named in a run's summary (the count covers all of them). */
const BROADCAST_NAMES = 8;
/** Empty buckets kept for the next windows. */
const BUCKET_POOL_CAP = 4;

/** WindowAggregator state between windows (see snapshot()). */
export interface AggregatorSnapshot {
  addresses: AddressTableSnapshot;
  history: PairHistorySnapshot;
  prevalence: Uint16Array;
  insideSeen: Uint8Array;
  insideHosts: number;
  /** Recent new peers per inside host, in list order. */
  recent: { host: number; peers: number[]; firsts: number[] }[];
  nextClose: number;
  maxTime: number;
  stats: WindowAggregator['stats'];
}

/**
 * Per-host windows in event time (DESIGN.md section 2, window/). Flow records are attributed to the
 * window of their start; records longer than one window spread their packets and bytes over the
 * windows they overlap. A window closes when the watermark passes its end; records for closed windows
 * are late and counted. Every address is tracked as source and as target; the peer history behind
 * `new_peers`, first contacts and destination prevalence lives here too.
 */
export class WindowAggregator {
  readonly addresses = new AddressTable();
  readonly history: PairHistory;
  /** Distinct inside hosts that ever contacted each address (by address id), saturating at 65535. */
  prevalence = new Uint16Array(1024);
  /** Inside addresses seen so far. */
  insideHosts = 0;
  private insideSeen = new Uint8Array(1024);
  /** Per address id: 0 not looked at yet, 1 a host, 2 not a host (multicast, broadcast, an inside prefix's directed broadcast, unspecified). */
  private nonHostSeen = new Uint8Array(1024);
  private recent = new Map<number, RecentPeer[]>();
  private open = new Map<number, HostBucket>();
  private lastBucketW = Number.NaN;
  private lastBucket: HostBucket | null = null;
  private readonly bucketPool: HostBucket[] = [];
  /** Index of the next window to close (all earlier ones are closed). */
  private nextClose = Number.NaN;
  private maxTime = Number.NEGATIVE_INFINITY;
  /**
   * `hostsOverCap`: records dropped because they would have added an address past `maxHosts`;
   * `timeOutliers`: records dropped for a corrupt time (more than a day past the input's, alone);
   * `sketchCapped`: host-windows whose exact sets or entropy counters reached their bounds;
   * `broadcastSinks`: host-windows of an address that behaved as a subnet's broadcast (isBroadcastSink).
   */
  readonly stats = {
    records: 0, late: 0, nonHostDst: 0, windowsClosed: 0, lateVolumeMoved: 0, hostsOverCap: 0, sketchCapped: 0, timeOutliers: 0,
    broadcastSinks: 0,
  };
  /** A record dated more than MAX_FORWARD_JUMP_MS past the latest event time, until the next record comes. */
  private held: FlowRecord | null = null;
  /** Distinct addresses tracked at most (see WindowOptions.maxHosts); may be changed between inputs. */
  maxHosts: number;
  private readonly W: number;
  private readonly newPeerMemory: number;

  /** Called for each first contact of an inside or outside initiator to a new peer (TRW input). */
  onFirstContact: ((src: number, dst: number, r: FlowRecord) => void) | null = null;

  constructor(private opts: WindowOptions, private onClose: (w: ClosedWindow) => void) {
    this.W = opts.windowMs;
    this.newPeerMemory = opts.newPeerMemoryMs ?? 3_600_000;
    this.history = new PairHistory(opts.maxHistoryPairs);
    this.maxHosts = opts.maxHosts ?? DEFAULT_MAX_HOSTS;
  }

  isInsideId(id: number): boolean {
    return id < this.insideSeen.length && this.insideSeen[id] === 2;
  }

  add(r: FlowRecord): void {
    // a record dated far past everything so far waits for the next one's verdict (flow/time-guard.ts)
    if (this.held !== null || (r.start - this.maxTime > MAX_FORWARD_JUMP_MS && this.maxTime !== Number.NEGATIVE_INFINITY)) {
      this.judge(r);
      return;
    }
    this.take(r);
  }

  /**
   * A record held for its time, or the one after it: when the next record is past the jump too, time
   * moved on and both count; when it is back at the input's time, the held one had a corrupt time and
   * is dropped (`timeOutliers`).
   */
  private judge(r: FlowRecord): void {
    const h = this.held;
    if (h === null) {
      // a copy: callers may hand in one record object filled anew each time
      this.held = { ...r };
      return;
    }
    this.held = null;
    if (r.start - this.maxTime > MAX_FORWARD_JUMP_MS) this.take(h);
    else this.stats.timeOutliers++;
    this.add(r);
  }

  private take(r: FlowRecord): void {
    this.stats.records++;
    const first = Math.floor(r.start / this.W);
    // the window holding the record's last instant (an end exactly on a boundary belongs before it)
    const last = r.end > r.start ? Math.max(first, Math.ceil(r.end / this.W) - 1) : first;
    if (Number.isNaN(this.nextClose)) this.nextClose = first;
    if (last < this.nextClose) { this.stats.late++; return; }
    if (this.adaptiveLatenessMs > 0) this.adaptLateness(r);
    // the record's own window, or the first still open when it began before the watermark
    const w = first < this.nextClose ? this.nextClose : first;
    // past the host cap, known hosts are still followed; a record bringing a new address is dropped
    if (this.addresses.size >= this.maxHosts && (this.addresses.peek(r.src) < 0 || this.addresses.peek(r.dst) < 0)) {
      this.stats.hostsOverCap++;
      if (r.end > this.maxTime) this.maxTime = r.end;
      this.closeUpTo(this.maxTime - this.opts.latenessMs);
      return;
    }
    const bucket = this.bucket(w);
    const srcId = this.addresses.id(r.src);
    const dstId = this.addresses.id(r.dst);
    this.grow(Math.max(srcId, dstId) + 1);
    const srcInside = this.markInside(srcId, r.src);
    this.markInside(dstId, r.dst);

    const newPair = this.history.add(srcId, dstId);
    if (newPair) {
      if (srcInside && this.prevalence[dstId]! < 65535) this.prevalence[dstId]!++;
      this.onFirstContact?.(srcId, dstId, r);
    }
    // A record longer than a window (flow exports with long active timeouts) spreads its packets and
    // octets over the windows it covers, in proportion to time; its first window also takes the share
    // of windows already closed. Counts of flows, peers and ports stay with the first window.
    const share = last > w ? (Math.min(r.end, (w + 1) * this.W) - r.start) / (r.end - r.start) : 1;
    if (first < w) this.stats.lateVolumeMoved++;
    const src = this.acc(bucket, srcId);
    src.asInitiator(r, dstId, newPair, share);
    if (srcInside) this.trackNewPeer(src, srcId, dstId, newPair, r);
    let nh = this.nonHostSeen[dstId]!;
    if (nh === 0) this.nonHostSeen[dstId] = nh = isNonHost(r.dst) || this.opts.internal.isBroadcast(r.dst) ? 2 : 1;
    const toHost = nh === 1;
    if (toHost) this.acc(bucket, dstId).asResponder(r, srcId, share);
    else this.stats.nonHostDst++;
    for (let k = w + 1; k <= last; k++) {
      const f = (Math.min(r.end, (k + 1) * this.W) - k * this.W) / (r.end - r.start);
      const b = this.bucket(k);
      this.acc(b, srcId).volumeAsInitiator(r, f);
      if (toHost) this.acc(b, dstId).volumeAsResponder(r, f);
    }

    if (r.end > this.maxTime) this.maxTime = r.end;
    this.closeUpTo(this.maxTime - this.opts.latenessMs);
  }

  private trackNewPeer(src: HostAcc, srcId: number, dstId: number, newPair: boolean, r: FlowRecord): void {
    let list = this.recent.get(srcId);
    // prevalence only grows, so a peer that is not rare at first contact never becomes rare: skip it
    if (newPair && this.isRare(dstId)) {
      if (!list) { list = []; this.recent.set(srcId, list); }
      if (list.length >= 16) list.shift();
      list.push({ peer: dstId, first: r.start });
    }
    // only a rare peer's bytes count, and rare is checked first: most records go to common peers
    if (!list || !this.isRare(dstId)) return;
    for (const p of list) {
      if (p.peer !== dstId) continue;
      if (r.start - p.first > this.newPeerMemory) return;
      if (!this.isRare(dstId)) return;
      src.newPeerBytes += r.bytes;
      if (r.bytes > src.newPeerTopBytes) { src.newPeerTop = dstId; src.newPeerTopBytes = r.bytes; }
      return;
    }
  }

  /** Contacted by at most one other inside host beyond the first, or by <= 2% of them. */
  isRare(id: number): boolean {
    const others = this.prevalence[id]! - 1;
    return others <= Math.max(1, Math.floor(this.insideHosts * 0.02));
  }

  /**
   * Allowed lateness can change between inputs (captures 5 s, flow exports longer). With
   * `adaptUpToMs` it also grows with the longest record seen, up to that bound: an exporter's records
   * arrive when their flow (or its active timeout) ends, so the lateness should cover their duration.
   */
  setLateness(ms: number, adaptUpToMs = 0): void {
    this.opts = { ...this.opts, latenessMs: ms };
    this.adaptiveLatenessMs = adaptUpToMs;
  }

  get latenessMs(): number {
    return this.opts.latenessMs;
  }

  private adaptiveLatenessMs = 0;

  private adaptLateness(r: FlowRecord): void {
    const want = Math.min(this.adaptiveLatenessMs, r.end - r.start + 5_000);
    if (want > this.opts.latenessMs) this.opts = { ...this.opts, latenessMs: want };
  }

  /** Advances the watermark without a record (wall-clock idleness, end of a quiet input). */
  advance(tMs: number): void {
    if (tMs > this.maxTime) this.maxTime = tMs;
    this.closeUpTo(this.maxTime - this.opts.latenessMs);
  }

  /** Closes every open window (end of input). */
  finish(): void {
    const h = this.held;
    if (h !== null) { this.held = null; this.take(h); }
    if (Number.isNaN(this.nextClose)) return;
    let last = this.nextClose - 1;
    for (const w of this.open.keys()) if (w > last) last = w;
    this.closeUpTo((last + 1) * this.W);
  }

  private closeUpTo(watermark: number): void {
    if (Number.isNaN(this.nextClose)) return;
    while ((this.nextClose + 1) * this.W <= watermark) {
      const w = this.nextClose;
      const bucket = this.open.get(w);
      this.open.delete(w);
      if (this.lastBucketW === w) { this.lastBucketW = Number.NaN; this.lastBucket = null; }
      this.nextClose = w + 1;
      this.stats.windowsClosed++;
      if (bucket) for (const h of bucket.hosts) if (h.sketchCapped) this.stats.sketchCapped++;
      const all = bucket ? bucket.hosts.slice() : [];
      if (bucket) { bucket.clear(); if (this.bucketPool.length < BUCKET_POOL_CAP) this.bucketPool.push(bucket); }
      const hosts = all.filter((h) => !this.isBroadcastSink(h));
      if (hosts.length < all.length) this.noteBroadcastSinks(all, hosts);
      this.onClose({ start: w * this.W, end: (w + 1) * this.W, hosts });
      for (const h of all) {
        h.release();
        if (this.accPool.length < ACC_POOL_CAP) this.accPool.push(h);
      }
      this.pruneRecent(w * this.W);
    }
  }

  /**
   * The window's target behaved as a subnet's directed broadcast: an IPv4 address that sent nothing,
   * took only non-TCP traffic (TCP is never broadcast), and is the all-ones address of a /8 to /30
   * prefix that holds at least two of its sources and at least half of them. Its window is no host's,
   * as multicast is not: a LAN's name-service and discovery broadcasts to x.y.z.255 otherwise look like
   * a fan-in flood whatever `--internal` says. The sources keep their flows. An address that answers
   * or sends anything, or whose sources come from elsewhere, stays a host.
   */
  private isBroadcastSink(h: HostAcc): boolean {
    if (h.flowsOut > 0 || h.pktsOut > 0 || h.flowsIn < 2 || h.nontcpIn < h.bytesIn) return false;
    const a = parseIpv4(this.addresses.name(h.hostId));
    const k = a < 0 ? 0 : broadcastHostBits(a);
    if (k === 0) return false;
    const net = Math.floor(a / 2 ** k);
    let sources = 0, within = 0;
    h.forEachSource((peer) => {
      sources++;
      const s = parseIpv4(this.addresses.name(peer));
      if (s >= 0 && Math.floor(s / 2 ** k) === net) within++;
    });
    return within >= 2 && 2 * within >= sources;
  }

  /** Addresses set aside as broadcast sinks (the first BROADCAST_NAMES of them), for the run's summary. */
  readonly broadcastNames = new Set<string>();
  /** More addresses were set aside than broadcastNames holds. */
  moreBroadcastNames = false;

  private noteBroadcastSinks(all: readonly HostAcc[], kept: readonly HostAcc[]): void {
    this.stats.broadcastSinks += all.length - kept.length;
    const keep = new Set(kept);
    for (const h of all) {
      if (keep.has(h)) continue;
      const name = this.addresses.name(h.hostId);
      if (this.broadcastNames.size < BROADCAST_NAMES) this.broadcastNames.add(name);
      else if (!this.broadcastNames.has(name)) this.moreBroadcastNames = true;
    }
  }

  private pruneRecent(now: number): void {
    if (this.stats.windowsClosed % 60 !== 0) return;
    for (const [k, list] of this.recent) {
      const keep = list.filter((p) => now - p.first <= this.newPeerMemory);
      if (keep.length === 0) this.recent.delete(k);
      else if (keep.length !== list.length) this.recent.set(k, keep);
    }
  }

  /**
   * Everything the aggregator learned, for the state store: between windows (none open, as after
   * finish()), since open windows' accumulators are not part of it. `withOpen` (a checkpoint taken in a
   * live run as a window closes) takes it while later windows are open: a restore then continues from
   * the next window to close, and what those windows had gathered is not in it.
   */
  snapshot(withOpen = false): AggregatorSnapshot {
    if (this.open.size > 0 && !withOpen) throw new Error('aggregator snapshot with open windows');
    return {
      addresses: this.addresses.snapshot(), history: this.history.snapshot(),
      prevalence: this.prevalence.slice(), insideSeen: this.insideSeen.slice(), insideHosts: this.insideHosts,
      recent: [...this.recent].map(([host, list]) => ({ host, peers: list.map((p) => p.peer), firsts: list.map((p) => p.first) })),
      nextClose: this.nextClose, maxTime: this.maxTime, stats: { ...this.stats },
    };
  }

  /** Continues from a snapshot: the next window to close, peer history, prevalence and counters. */
  restore(s: AggregatorSnapshot): void {
    this.addresses.restore(s.addresses);
    this.history.restore(s.history);
    this.prevalence = s.prevalence.slice();
    this.insideSeen = s.insideSeen.slice();
    this.nonHostSeen = new Uint8Array(Math.max(this.prevalence.length, this.insideSeen.length));
    this.insideHosts = s.insideHosts;
    this.recent = new Map(s.recent.map((r) => [r.host, r.peers.map((peer, i) => ({ peer, first: r.firsts[i]! }))]));
    this.open.clear();
    this.lastBucketW = Number.NaN;
    this.lastBucket = null;
    this.nextClose = s.nextClose;
    this.maxTime = s.maxTime;
    Object.assign(this.stats, s.stats);
  }

  private bucket(w: number): HostBucket {
    // nearly every record goes to the window of the one before it
    if (w === this.lastBucketW && this.lastBucket) return this.lastBucket;
    let b = this.open.get(w);
    if (!b) { b = this.bucketPool.pop() ?? new HostBucket(); this.open.set(w, b); }
    this.lastBucketW = w;
    this.lastBucket = b;
    return b;
  }

  private acc(b: HostBucket, id: number): HostAcc {
    let a = b.get(id);
    if (!a) {
      a = this.accPool.pop()?.reuse(id) ?? new HostAcc(id);
      b.put(a);
    }
    return a;
  }

  /** Accumulators of closed windows, reused (a window of a million hosts made a million objects). */
  private readonly accPool: HostAcc[] = [];

  private markInside(id: number, addr: string): boolean {
    const s = this.insideSeen[id]!;
    if (s !== 0) return s === 2;
    const inside = this.opts.internal.has(addr);
    this.insideSeen[id] = inside ? 2 : 1;
    if (inside) this.insideHosts++;
    return inside;
  }

  private grow(n: number): void {
    if (n <= this.prevalence.length) return;
    let len = this.prevalence.length;
    while (len < n) len *= 2;
    const p = new Uint16Array(len); p.set(this.prevalence); this.prevalence = p;
    const s = new Uint8Array(len); s.set(this.insideSeen); this.insideSeen = s;
    const nh = new Uint8Array(len); nh.set(this.nonHostSeen); this.nonHostSeen = nh;
  }
}
