import { Fragment, type PacketView, type QuotedTuple } from '../decode/view.js';
import { Ipv4TextCache, Ipv6TextCache } from './addr-text.js';
import { St, outcomeOf, tcpEnded, tcpStep } from './flow-state.js';
import { flowHash } from './key-hash.js';
import type { FlowRecord, FlowSink } from './record.js';

export interface FlowTableOptions {
  /** Updates are cut at multiples of this in epoch time (ms); 0 = no window cuts. */
  windowMs: number;
  idleTimeoutMs: number;
  activeTimeoutMs: number;
  /** Flows held at once; when full the least recently seen flows are emitted and evicted. */
  maxFlows: number;
  /** FlowRecord.exporter of every record. */
  exporter: string;
}

/** Packets this late (event time) still make it into the window they belong to before it is swept. */
export const ALLOWED_LATENESS_MS = 5_000;
/** A closed TCP flow waits this long (event time) for its last ACK before it is removed. */
export const TCP_LINGER_MS = 2_000;

const INITIAL_CAPACITY = 1 << 14;
/** When full, about this fraction of the held flows (the least recently seen) is evicted at once. */
const EVICT_FRACTION = 1 / 32;

// Per-flow layout: one 64-octet block per flow (one cache line when aligned), seen as 16 words (`u`)
// and 8 doubles (`d`). Words: key hash; family | protocol << 8 | state << 16; ports (A << 16 | B);
// address word 0 of A and of B (all of an IPv4 address); packets each way; vlan + 1 | flags A << 13 |
// flags B << 21. Doubles 4-7: first and last packet time of the update, octets each way. IPv6 address
// words 1-3 and TCP close times are cold and live apart. One line per packet instead of one per
// column is what keeps the table fast once it outgrows the core's cache.
const W = 16;
const W_HASH = 0, W_META = 1, W_PORTS = 2, W_A = 3, W_B = 4, W_PKTS = 5, W_VF = 7;
const D = 8;
const D_FIRST = 4, D_LAST = 5, D_OCTETS = 6;
const STATE_SHIFT = 16;
const VLAN_MASK = 0x1fff;

export interface FlowTableStats {
  packets: number;
  /** IP-layer octets counted into flows. */
  bytes: number;
  flowsCreated: number;
  records: number;
  /** Flows pushed out because the table was full. */
  evicted: number;
  /** Flows held now. */
  active: number;
  /**
   * TCP connections whose handshake completed, and those of them with no packet seen back from the
   * responder (completion implied by the initiator's ACK alone): many of those mean a one-way capture.
   */
  tcpCompleted: number;
  tcpCompletedUnseen: number;
}

/**
 * Bidirectional 5-tuple flow table (METHODS.md 3.1, conventions in record.ts). Each flow is a block in
 * one buffer, found through an open-addressing index (linear probing, backward-shift delete) on the
 * direction-free key hash. Idle flows are found by periodic scans (every quarter of the idle timeout)
 * and checked exactly when their next packet comes. A FlowRecord is made only when an update is cut: at
 * a window boundary, an active or idle timeout, a TCP close, an eviction, or `flush`.
 */
export class FlowTable {
  readonly stats: FlowTableStats = { packets: 0, bytes: 0, flowsCreated: 0, records: 0, evicted: 0, active: 0, tcpCompleted: 0, tcpCompletedUnseen: 0 };

  private readonly windowMs: number;
  private readonly idleMs: number;
  private readonly activeMs: number;
  private readonly maxFlows: number;
  private readonly exporter: string;
  private readonly idleScanMs: number;

  private cap = 0;
  private u = new Uint32Array(0);
  private d = new Float64Array(0);
  /** IPv6 address words 1-3 of A, then of B. */
  private v6 = new Uint32Array(0);
  /** When a closing TCP flow is due to go (0 = not closing). */
  private closeAt = new Float64Array(0);
  private free = new Int32Array(0);
  private freeTop = 0;
  /** Ids below this have been used at least once. */
  private highWater = 0;

  // index: two words per slot, the key hash and the flow id + 1 (0 = empty)
  private index = new Int32Array(0);
  private mask = 0;

  // closing flows in the order they closed (close times only grow: the clock never goes back)
  private closing = new Int32Array(256);
  private closingAt = new Float64Array(256);
  private closingHead = 0;
  private closingLen = 0;

  private clock = -Infinity;
  /** The window the clock is in (window cuts on). */
  private winStart = -Infinity;
  private winEnd = Infinity;
  private nextSweepAt = NaN;
  private nextIdleScanAt = NaN;
  /** Before this event time nothing is due (no window end, sweep, close or idle scan): `add` skips `advance`. */
  private nextDueAt = -Infinity;

  // scratch keys, so lookups allocate nothing
  private readonly keyS = new Uint32Array(4);
  private readonly keyD = new Uint32Array(4);
  private readonly text4 = new Ipv4TextCache();
  private readonly text6 = new Ipv6TextCache();
  private dir = 0;
  /** The flow the last packet went to (-1 none): tried first. A freed or reused block fails the key check. */
  private lastFlow = -1;

  constructor(opts: FlowTableOptions, private readonly sink: FlowSink) {
    this.windowMs = opts.windowMs;
    this.idleMs = opts.idleTimeoutMs;
    this.activeMs = opts.activeTimeoutMs;
    this.maxFlows = Math.max(1, Math.floor(opts.maxFlows));
    this.exporter = opts.exporter;
    this.idleScanMs = Math.max(1000, this.idleMs / 4);
    // `bytes` passes 2^30 within seconds of traffic: made a double field from the start, since a field
    // turning from small integer to double deoptimises the code that updates it
    this.stats.bytes = 0.5;
    this.stats.bytes = 0;
    this.grow(Math.min(INITIAL_CAPACITY, this.maxFlows));
  }

  /** Counts one decoded packet, seen at the view's `tsMs` (epoch ms). */
  add(v: PacketView): void {
    const tsMs = v.tsMs;
    if (tsMs > this.clock) {
      if (tsMs < this.nextDueAt) this.clock = tsMs;
      else this.advance(tsMs);
    }
    const st = this.stats;
    st.packets++;
    st.bytes += v.ipBytes;
    const fam = v.family;
    const proto = v.proto;
    let sport = v.sport, dport = v.dport;
    let reply = false;
    if (v.icmpType >= 0 && v.fragment === Fragment.None) {
      if ((proto === 1 && v.icmpType === 0) || (proto === 58 && v.icmpType === 129)) {
        // echo reply: counted backwards on its request's flow (record.ts)
        reply = true;
        sport = ((proto === 1 ? 8 : 128) << 8) | v.icmpCode;
        dport = 0;
      } else if (v.icmpUnreachable && v.quoted.valid) {
        this.markQuoted(v.quoted, St.IcmpRejected);
      } else if (((proto === 1 && v.icmpType === 11) || (proto === 58 && v.icmpType === 3)) && v.quoted.valid) {
        // time exceeded (RFC 792, RFC 4443 section 3.3): the quoted probe expired on the way
        this.markQuoted(v.quoted, St.TtlExpired);
      }
    }
    const s = this.keyS, d = this.keyD;
    if (fam === 4) {
      s[0] = v.src4;
      d[0] = v.dst4;
    } else {
      const a = v.src6, b = v.dst6;
      s[0] = a[0]!; s[1] = a[1]!; s[2] = a[2]!; s[3] = a[3]!;
      d[0] = b[0]!; d[1] = b[1]!; d[2] = b[2]!; d[3] = b[3]!;
    }
    const h = flowHash(fam, proto, s, sport, d, dport);
    let f = this.find(h, fam, proto, s, sport, d, dport);
    // a flow idle past the timeout ends here even if no scan has reached it yet
    if (f >= 0 && this.clock - this.d[f * D + D_LAST]! >= this.idleMs) {
      this.remove(f);
      f = -1;
    }
    let dir = this.dir;
    if (f < 0) {
      f = reply ? this.create(h, fam, proto, d, dport, s, sport, v.vlan) : this.create(h, fam, proto, s, sport, d, dport, v.vlan);
      dir = reply ? 1 : 0;
    }
    this.pktTs = tsMs;
    this.count(f, dir, v.ipBytes, v.tcpFlags);
  }

  /** Moves event time forward to `tsMs` (never back), cutting and expiring what is due. */
  advance(tsMs: number): void {
    if (!(tsMs > this.clock)) return;
    this.clock = tsMs;
    if (Number.isNaN(this.nextIdleScanAt)) {
      this.nextIdleScanAt = tsMs + this.idleScanMs;
      if (this.windowMs > 0) this.nextSweepAt = this.windowStart(tsMs) + this.windowMs + ALLOWED_LATENESS_MS;
    }
    if (this.windowMs > 0) {
      if (tsMs >= this.winEnd || this.winStart === -Infinity) {
        this.winStart = this.windowStart(tsMs);
        this.winEnd = this.winStart + this.windowMs;
      }
      if (tsMs >= this.nextSweepAt) this.sweepWindows(tsMs);
    }
    while (this.closingLen > 0 && this.closingAt[this.closingHead]! <= tsMs) {
      const f = this.closing[this.closingHead]!;
      const at = this.closingAt[this.closingHead]!;
      this.closingHead = (this.closingHead + 1) % this.closing.length;
      this.closingLen--;
      // the id may have been freed (idle, eviction) and reused since: only the same close counts
      if (this.u[f * W + W_META] !== 0 && this.closeAt[f] === at) this.remove(f);
    }
    if (tsMs >= this.nextIdleScanAt) this.expireIdle(tsMs);
    this.updateNextDue();
  }

  private updateNextDue(): void {
    let t = this.nextIdleScanAt;
    if (this.windowMs > 0) t = Math.min(t, this.winEnd, this.nextSweepAt);
    if (this.closingLen > 0) t = Math.min(t, this.closingAt[this.closingHead]!);
    this.nextDueAt = t;
  }

  /** End of input: emits every pending update and empties the table. */
  flush(): void {
    for (let f = 0; f < this.highWater; f++) if (this.u[f * W + W_META] !== 0) this.remove(f);
    this.closingLen = 0;
  }

  /** Problem counts the table contributes to an ingest summary. */
  problemCounts(): Record<string, number> {
    return this.stats.evicted > 0 ? { 'flow-evicted': this.stats.evicted } : {};
  }

  // ---------------------------------------------------------------------------------------------

  private windowStart(ts: number): number {
    return Math.floor(ts / this.windowMs) * this.windowMs;
  }

  /** Emits every pending update of a window that ended at least the allowed lateness ago. */
  // The scans below set their next due time before the loop: the loop runs as on-stack-replaced code,
  // and code after it, compiled before it ever ran, deoptimised on every scan.

  private sweepWindows(ts: number): void {
    const boundary = this.windowStart(ts - ALLOWED_LATENESS_MS);
    this.nextSweepAt = boundary + this.windowMs + ALLOWED_LATENESS_MS;
    const u = this.u, dd = this.d, end = this.highWater;
    for (let f = 0; f < end; f++) {
      if (u[f * W + W_META] !== 0 && this.pending(f) && this.windowStart(dd[f * D + D_FIRST]!) + this.windowMs <= boundary) this.emit(f);
    }
  }

  private expireIdle(ts: number): void {
    this.nextIdleScanAt = ts + this.idleScanMs;
    const u = this.u, dd = this.d, end = this.highWater, idle = this.idleMs;
    for (let f = 0; f < end; f++) {
      if (u[f * W + W_META] !== 0 && ts - dd[f * D + D_LAST]! >= idle) this.remove(f);
    }
  }

  private pending(f: number): boolean {
    return this.u[f * W + W_PKTS]! + this.u[f * W + W_PKTS + 1]! > 0;
  }

  /** The pending update must be cut before a packet at `ts` joins it. */
  private dueCut(first: number, ts: number): boolean {
    if (ts - first >= this.activeMs) return true;
    if (this.windowMs === 0) return false;
    // an update begun in the clock's window cannot be in an earlier one than `ts` (ts <= clock)
    if (first >= this.winStart) return false;
    return ts >= this.windowStart(first) + this.windowMs;
  }

  /** The time of the packet being counted (a field: see PacketView.tsMs). */
  private pktTs = Number.NaN;

  private count(f: number, dir: number, octets: number, tcpFlags: number): void {
    const u = this.u, dd = this.d, ts = this.pktTs;
    const o = f * W, p = f * D;
    let pending = u[o + W_PKTS]! + u[o + W_PKTS + 1]! > 0;
    if (pending && this.dueCut(dd[p + D_FIRST]!, ts)) {
      this.emit(f);
      pending = false;
    }
    if (!pending) {
      dd[p + D_FIRST] = ts;
      dd[p + D_LAST] = ts;
    } else if (ts > dd[p + D_LAST]!) {
      dd[p + D_LAST] = ts;
    } else if (ts < dd[p + D_FIRST]!) {
      dd[p + D_FIRST] = ts;
    }
    u[o + W_PKTS + dir]!++;
    dd[p + D_OCTETS + dir]! += octets;
    const meta = u[o + W_META]!;
    let state = meta >>> STATE_SHIFT;
    if (dir === 1) state |= St.ReverseSeen;
    if (tcpFlags !== 0) u[o + W_VF] = u[o + W_VF]! | (tcpFlags << (13 + (dir << 3)));
    if (((meta >>> 8) & 0xff) === 6) {
      state = tcpStep(state, dir, tcpFlags);
      if ((state & St.Closing) === 0 && tcpEnded(state, tcpFlags)) {
        state |= St.Closing;
        this.queueClose(f, this.clock + TCP_LINGER_MS);
      }
    }
    u[o + W_META] = ((meta & 0xffff) | (state << STATE_SHIFT)) >>> 0;
  }

  private queueClose(f: number, at: number): void {
    if (this.closingLen === this.closing.length) {
      const n = this.closing.length * 2;
      const ids = new Int32Array(n), ats = new Float64Array(n);
      for (let i = 0; i < this.closingLen; i++) {
        const j = (this.closingHead + i) % this.closing.length;
        ids[i] = this.closing[j]!;
        ats[i] = this.closingAt[j]!;
      }
      this.closing = ids;
      this.closingAt = ats;
      this.closingHead = 0;
    }
    const j = (this.closingHead + this.closingLen) % this.closing.length;
    this.closing[j] = f;
    this.closingAt[j] = at;
    this.closingLen++;
    this.closeAt[f] = at;
    if (at < this.nextDueAt) this.nextDueAt = at;
  }

  /** An ICMP error quoted this tuple: its flow (if held) gets the state bit (rejected, or expired on the way). */
  private markQuoted(q: QuotedTuple, bit: number): void {
    const s = this.keyS, d = this.keyD;
    if (q.family === 4) {
      s[0] = q.src4;
      d[0] = q.dst4;
    } else {
      s.set(q.src6);
      d.set(q.dst6);
    }
    const f = this.find(flowHash(q.family, q.proto, s, q.sport, d, q.dport), q.family, q.proto, s, q.sport, d, q.dport);
    if (f >= 0) this.u[f * W + W_META] = (this.u[f * W + W_META]! | (bit << STATE_SHIFT)) >>> 0;
  }

  /** Flow id for the key, or -1; sets `this.dir` (0 when the sender is the flow's initiator). */
  private find(h: number, fam: number, proto: number, s: Uint32Array, sport: number, d: Uint32Array, dport: number): number {
    // packets of one flow come in runs (a transfer's segments, a flood): the last flow found is tried
    // first, in a block still in cache, before the index
    const last = this.lastFlow;
    if (last >= 0 && this.u[last * W + W_HASH] === h && this.matches(last, fam, proto, s, sport, d, dport)) return last;
    const index = this.index, mask = this.mask;
    const tag = h | 0;
    for (let i = h & mask; ; i = (i + 1) & mask) {
      const e = index[2 * i + 1]!;
      if (e === 0) return -1;
      // the hash beside the id spares a visit to every other flow's block on the probe path
      if (index[2 * i] !== tag) continue;
      const f = e - 1;
      if (this.matches(f, fam, proto, s, sport, d, dport)) return (this.lastFlow = f);
    }
  }

  /** Whether flow `f` has this key, either way round; sets `this.dir`. */
  private matches(f: number, fam: number, proto: number, s: Uint32Array, sport: number, d: Uint32Array, dport: number): boolean {
    const u = this.u, o = f * W;
    if ((u[o + W_META]! & 0xffff) !== (fam | (proto << 8))) return false;
    const ports = u[o + W_PORTS], a0 = u[o + W_A], b0 = u[o + W_B];
    if (ports === (((sport << 16) | dport) >>> 0) && a0 === s[0] && b0 === d[0] && (fam === 4 || this.sameV6(f, s, d))) { this.dir = 0; return true; }
    if (ports === (((dport << 16) | sport) >>> 0) && a0 === d[0] && b0 === s[0] && (fam === 4 || this.sameV6(f, d, s))) { this.dir = 1; return true; }
    return false;
  }

  private sameV6(f: number, a: Uint32Array, b: Uint32Array): boolean {
    const w = this.v6, o = f * 6;
    return w[o] === a[1] && w[o + 1] === a[2] && w[o + 2] === a[3] && w[o + 3] === b[1] && w[o + 4] === b[2] && w[o + 5] === b[3];
  }

  private create(h: number, fam: number, proto: number, a: Uint32Array, aPort: number, b: Uint32Array, bPort: number, vlan: number): number {
    if (this.stats.active >= this.maxFlows) this.evictOldest();
    let f: number;
    if (this.freeTop > 0) f = this.free[--this.freeTop]!;
    else {
      if (this.highWater === this.cap) this.grow(Math.min(this.cap * 2, this.maxFlows));
      f = this.highWater++;
    }
    const u = this.u, o = f * W;
    u[o + W_HASH] = h;
    u[o + W_META] = fam | (proto << 8);
    u[o + W_PORTS] = ((aPort << 16) | bPort) >>> 0;
    u[o + W_A] = a[0]!;
    u[o + W_B] = b[0]!;
    u[o + W_PKTS] = 0; u[o + W_PKTS + 1] = 0;
    u[o + W_VF] = (vlan + 1) & VLAN_MASK;
    if (fam === 6) {
      const w = this.v6, q = f * 6;
      w[q] = a[1]!; w[q + 1] = a[2]!; w[q + 2] = a[3]!;
      w[q + 3] = b[1]!; w[q + 4] = b[2]!; w[q + 5] = b[3]!;
    }
    const dd = this.d, p = f * D;
    dd[p + D_OCTETS] = 0; dd[p + D_OCTETS + 1] = 0;
    this.closeAt[f] = 0;
    this.insertIndex(f, h);
    this.lastFlow = f;
    this.stats.flowsCreated++;
    this.stats.active++;
    return f;
  }

  /**
   * The table is full: emit and drop a small batch (about 1/32 of the held flows) of the least recently
   * seen, all from the oldest 1/32 of the time range the held flows span. Two scans, amortised over the
   * batch.
   */
  private evictOldest(): void {
    const u = this.u, dd = this.d;
    let lo = Infinity, hi = -Infinity;
    for (let f = 0; f < this.highWater; f++) {
      if (u[f * W + W_META] === 0) continue;
      const t = dd[f * D + D_LAST]!;
      if (t < lo) lo = t;
      if (t > hi) hi = t;
    }
    const cutoff = lo + (hi - lo) * EVICT_FRACTION;
    let budget = Math.max(1, Math.ceil(this.stats.active * EVICT_FRACTION));
    for (let f = 0; f < this.highWater && budget > 0; f++) {
      if (u[f * W + W_META] !== 0 && dd[f * D + D_LAST]! <= cutoff) {
        this.stats.evicted++;
        budget--;
        this.remove(f);
      }
    }
  }

  /** Emits the pending update (if any) and frees the flow. */
  private remove(f: number): void {
    if (this.pending(f)) this.emit(f);
    const meta = this.u[f * W + W_META]!;
    if (((meta >>> 8) & 0xff) === 6 && ((meta >>> STATE_SHIFT) & St.Completed) !== 0) {
      this.stats.tcpCompleted++;
      if (((meta >>> STATE_SHIFT) & St.ReverseSeen) === 0) this.stats.tcpCompletedUnseen++;
    }
    this.deleteIndex(f);
    this.u[f * W + W_META] = 0;
    this.free[this.freeTop++] = f;
    this.stats.active--;
  }

  private emit(f: number): void {
    const u = this.u, dd = this.d, o = f * W, p = f * D;
    const meta = u[o + W_META]!;
    const fam = meta & 0xff, proto = (meta >>> 8) & 0xff;
    const ports = u[o + W_PORTS]!, vf = u[o + W_VF]!;
    const rec: FlowRecord = {
      start: dd[p + D_FIRST]!,
      end: dd[p + D_LAST]!,
      proto,
      src: this.addrText(f, 0, fam),
      dst: this.addrText(f, 1, fam),
      sport: ports >>> 16,
      dport: ports & 0xffff,
      pkts: u[o + W_PKTS]!,
      bytes: dd[p + D_OCTETS]!,
      rpkts: u[o + W_PKTS + 1]!,
      rbytes: dd[p + D_OCTETS + 1]!,
      flags: (vf >>> 13) & 0xff,
      rflags: (vf >>> 21) & 0xff,
      outcome: outcomeOf(proto, meta >>> STATE_SHIFT, ports & 0xffff),
      exporter: this.exporter,
    };
    if ((vf & VLAN_MASK) > 0) rec.vlan = (vf & VLAN_MASK) - 1;
    u[o + W_PKTS] = 0; u[o + W_PKTS + 1] = 0;
    u[o + W_VF] = vf & VLAN_MASK;
    dd[p + D_OCTETS] = 0; dd[p + D_OCTETS + 1] = 0;
    this.stats.records++;
    this.sink(rec);
  }

  /** Text of end A (`end` 0) or B (1). */
  private addrText(f: number, end: number, fam: number): string {
    const w0 = this.u[f * W + W_A + end]!;
    if (fam === 4) return this.text4.text(w0);
    const w = this.v6, q = f * 6 + 3 * end;
    return this.text6.text(w0, w[q]!, w[q + 1]!, w[q + 2]!);
  }

  // --- index ---

  private insertIndex(f: number, h: number): void {
    const index = this.index, mask = this.mask;
    let i = h & mask;
    while (index[2 * i + 1] !== 0) i = (i + 1) & mask;
    index[2 * i] = h | 0;
    index[2 * i + 1] = f + 1;
  }

  /** Linear-probing delete by backward shift: no tombstones, probe chains stay short. */
  private deleteIndex(f: number): void {
    const index = this.index, mask = this.mask;
    let i = this.u[f * W + W_HASH]! & mask;
    while (index[2 * i + 1] !== f + 1) i = (i + 1) & mask;
    for (let j = (i + 1) & mask; index[2 * j + 1] !== 0; j = (j + 1) & mask) {
      const home = index[2 * j]! & mask;
      // the entry at j may move into the hole at i unless its home lies cyclically in (i, j]
      const stays = i <= j ? home > i && home <= j : home > i || home <= j;
      if (!stays) {
        index[2 * i] = index[2 * j]!;
        index[2 * i + 1] = index[2 * j + 1]!;
        i = j;
      }
    }
    index[2 * i + 1] = 0;
  }

  private grow(cap: number): void {
    const buf = new ArrayBuffer(cap * W * 4);
    const u = new Uint32Array(buf);
    u.set(this.u);
    this.u = u;
    this.d = new Float64Array(buf);
    const v6 = new Uint32Array(cap * 6);
    v6.set(this.v6);
    this.v6 = v6;
    const closeAt = new Float64Array(cap);
    closeAt.set(this.closeAt);
    this.closeAt = closeAt;
    const free = new Int32Array(cap);
    free.set(this.free);
    this.free = free;
    this.cap = cap;
    let slots = 1;
    while (slots < cap * 2) slots <<= 1;
    this.index = new Int32Array(slots * 2);
    this.mask = slots - 1;
    for (let f = 0; f < this.highWater; f++) if (u[f * W + W_META] !== 0) this.insertIndex(f, u[f * W + W_HASH]!);
  }
}
