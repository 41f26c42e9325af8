import { Fragment, type PacketView, type QuotedTuple } from '../decode/view.js';
import { ipv4ToString, ipv6ToString } from '../util/addr.js';
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

// Per-flow layout: one 128-octet block per flow in one buffer, seen as 32 words (`u`) and as 16
// doubles (`d`): words 0-15 hold the key and counts, doubles 8-15 the octets and times. A packet touches
// one block (two adjacent cache lines) instead of one line per column; that is what keeps the table
// fast once it outgrows the core's cache.
const W = 32;
const W_HASH = 0, W_META = 1, W_PORTS = 2, W_STATE = 3, W_A = 4, W_B = 8, W_PKTS = 12, W_FLAGS = 14, W_VLAN = 15;
const D = 16;
const D_OCTETS = 8, D_FIRST = 10, D_LAST = 11, D_WINDOW_END = 12, D_TOUCHED = 13, D_CLOSE_AT = 14;

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
}

/**
 * Bidirectional 5-tuple flow table (METHODS.md 3.1, conventions in record.ts). Each flow is a block in
 * two typed arrays, found through an open-addressing index (linear probing, backward-shift delete) on
 * the direction-free key hash. Idle flows are found by periodic scans (and checked exactly when their
 * next packet comes); a FlowRecord is made only when an update is cut: at a window boundary, an active
 * or idle timeout, a TCP close, an eviction, or `flush`.
 */
export class FlowTable {
  readonly stats: FlowTableStats = { packets: 0, bytes: 0, flowsCreated: 0, records: 0, evicted: 0, active: 0 };

  private readonly windowMs: number;
  private readonly idleMs: number;
  private readonly activeMs: number;
  private readonly maxFlows: number;
  private readonly exporter: string;
  private readonly idleScanMs: number;

  private cap = 0;
  private u = new Uint32Array(0);
  private d = new Float64Array(0);
  private free = new Int32Array(0);
  private freeTop = 0;
  /** Ids below this have been used at least once. */
  private highWater = 0;

  // index: flow id + 1 per slot, 0 = empty
  private index = new Int32Array(0);
  private mask = 0;

  // closing flows in the order they closed (close times only grow: the clock never goes back)
  private closing = new Int32Array(256);
  private closingAt = new Float64Array(256);
  private closingHead = 0;
  private closingLen = 0;

  private clock = -Infinity;
  private nextSweepAt = NaN;
  private nextIdleScanAt = NaN;

  // scratch keys, so lookups allocate nothing
  private readonly keyS = new Uint32Array(4);
  private readonly keyD = new Uint32Array(4);
  private readonly text6 = new Uint8Array(16);
  private dir = 0;

  constructor(opts: FlowTableOptions, private readonly sink: FlowSink) {
    this.windowMs = opts.windowMs;
    this.idleMs = opts.idleTimeoutMs;
    this.activeMs = opts.activeTimeoutMs;
    this.maxFlows = Math.max(1, Math.floor(opts.maxFlows));
    this.exporter = opts.exporter;
    this.idleScanMs = Math.max(1000, this.idleMs / 4);
    this.grow(Math.min(INITIAL_CAPACITY, this.maxFlows));
  }

  /** Counts one decoded packet seen at `tsMs` (epoch ms). */
  add(v: PacketView, tsMs: number): void {
    if (tsMs > this.clock) this.advance(tsMs);
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
        this.markRejected(v.quoted);
      }
    }
    const s = this.keyS, d = this.keyD;
    if (fam === 4) {
      s[0] = v.src4; s[1] = 0; s[2] = 0; s[3] = 0;
      d[0] = v.dst4; d[1] = 0; d[2] = 0; d[3] = 0;
    } else {
      const a = v.src6, b = v.dst6;
      s[0] = a[0]!; s[1] = a[1]!; s[2] = a[2]!; s[3] = a[3]!;
      d[0] = b[0]!; d[1] = b[1]!; d[2] = b[2]!; d[3] = b[3]!;
    }
    const h = flowHash(fam, proto, s, sport, d, dport);
    let f = this.find(h, fam, proto, s, sport, d, dport);
    // a flow idle past the timeout ends here even if no scan has reached it yet
    if (f >= 0 && this.clock - this.d[f * D + D_TOUCHED]! >= this.idleMs) {
      this.remove(f);
      f = -1;
    }
    let dir = this.dir;
    if (f < 0) {
      f = reply ? this.create(h, fam, proto, d, dport, s, sport, v.vlan) : this.create(h, fam, proto, s, sport, d, dport, v.vlan);
      dir = reply ? 1 : 0;
    }
    this.count(f, dir, tsMs, v.ipBytes, v.tcpFlags);
  }

  /** Moves event time forward to `tsMs` (never back), cutting and expiring what is due. */
  advance(tsMs: number): void {
    if (!(tsMs > this.clock)) return;
    this.clock = tsMs;
    if (Number.isNaN(this.nextIdleScanAt)) {
      this.nextIdleScanAt = tsMs + this.idleScanMs;
      if (this.windowMs > 0) this.nextSweepAt = this.windowStart(tsMs) + this.windowMs + ALLOWED_LATENESS_MS;
    }
    if (this.windowMs > 0 && tsMs >= this.nextSweepAt) this.sweepWindows(tsMs);
    while (this.closingLen > 0 && this.closingAt[this.closingHead]! <= tsMs) {
      const f = this.closing[this.closingHead]!;
      const at = this.closingAt[this.closingHead]!;
      this.closingHead = (this.closingHead + 1) % this.closing.length;
      this.closingLen--;
      // the id may have been freed (idle, eviction) and reused since: only the same close counts
      if (this.u[f * W + W_META] !== 0 && this.d[f * D + D_CLOSE_AT] === at) this.remove(f);
    }
    if (tsMs >= this.nextIdleScanAt) this.expireIdle(tsMs);
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
  private sweepWindows(ts: number): void {
    const boundary = this.windowStart(ts - ALLOWED_LATENESS_MS);
    const u = this.u, dd = this.d;
    for (let f = 0; f < this.highWater; f++) {
      if (u[f * W + W_META] !== 0 && dd[f * D + D_WINDOW_END]! <= boundary && this.pending(f)) this.emit(f);
    }
    this.nextSweepAt = boundary + this.windowMs + ALLOWED_LATENESS_MS;
  }

  private expireIdle(ts: number): void {
    const u = this.u, dd = this.d;
    for (let f = 0; f < this.highWater; f++) {
      if (u[f * W + W_META] !== 0 && ts - dd[f * D + D_TOUCHED]! >= this.idleMs) this.remove(f);
    }
    this.nextIdleScanAt = ts + this.idleScanMs;
  }

  private pending(f: number): boolean {
    return this.u[f * W + W_PKTS]! + this.u[f * W + W_PKTS + 1]! > 0;
  }

  private count(f: number, dir: number, ts: number, octets: number, tcpFlags: number): void {
    const u = this.u, dd = this.d;
    const o = f * W, p = f * D;
    let pending = u[o + W_PKTS]! + u[o + W_PKTS + 1]! > 0;
    if (pending && (ts >= dd[p + D_WINDOW_END]! || ts - dd[p + D_FIRST]! >= this.activeMs)) {
      this.emit(f);
      pending = false;
    }
    if (!pending) {
      dd[p + D_FIRST] = ts;
      dd[p + D_LAST] = ts;
      dd[p + D_WINDOW_END] = this.windowMs > 0 ? this.windowStart(ts) + this.windowMs : Infinity;
    } else if (ts > dd[p + D_LAST]!) {
      dd[p + D_LAST] = ts;
    } else if (ts < dd[p + D_FIRST]!) {
      dd[p + D_FIRST] = ts;
    }
    u[o + W_PKTS + dir]!++;
    dd[p + D_OCTETS + dir]! += octets;
    u[o + W_FLAGS] = u[o + W_FLAGS]! | (tcpFlags << (dir << 3));
    dd[p + D_TOUCHED] = this.clock;
    let state = u[o + W_STATE]!;
    if (dir === 1) state |= St.ReverseSeen;
    if ((u[o + W_META]! >>> 8) === 6) {
      state = tcpStep(state, dir, tcpFlags);
      if ((state & St.Closing) === 0 && tcpEnded(state, tcpFlags)) {
        state |= St.Closing;
        this.queueClose(f, this.clock + TCP_LINGER_MS);
      }
    }
    u[o + W_STATE] = state;
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
    this.d[f * D + D_CLOSE_AT] = at;
  }

  /** An ICMP unreachable quoted this tuple: its flow (if held) is rejected. */
  private markRejected(q: QuotedTuple): void {
    const s = this.keyS, d = this.keyD;
    if (q.family === 4) {
      s[0] = q.src4; s[1] = 0; s[2] = 0; s[3] = 0;
      d[0] = q.dst4; d[1] = 0; d[2] = 0; d[3] = 0;
    } else {
      s.set(q.src6);
      d.set(q.dst6);
    }
    const f = this.find(flowHash(q.family, q.proto, s, q.sport, d, q.dport), q.family, q.proto, s, q.sport, d, q.dport);
    if (f >= 0) this.u[f * W + W_STATE]! |= St.IcmpRejected;
  }

  /** Flow id for the key, or -1; sets `this.dir` (0 when the sender is the flow's initiator). */
  private find(h: number, fam: number, proto: number, s: Uint32Array, sport: number, d: Uint32Array, dport: number): number {
    const index = this.index, mask = this.mask, u = this.u;
    const meta = fam | (proto << 8);
    const fwd = ((sport << 16) | dport) >>> 0;
    const rev = ((dport << 16) | sport) >>> 0;
    for (let i = h & mask; ; i = (i + 1) & mask) {
      const e = index[i]!;
      if (e === 0) return -1;
      const o = (e - 1) * W;
      if (u[o + W_HASH] !== h || u[o + W_META] !== meta) continue;
      const ports = u[o + W_PORTS];
      if (ports === fwd && sameAddr(u, o + W_A, s, fam) && sameAddr(u, o + W_B, d, fam)) { this.dir = 0; return e - 1; }
      if (ports === rev && sameAddr(u, o + W_A, d, fam) && sameAddr(u, o + W_B, s, fam)) { this.dir = 1; return e - 1; }
    }
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
    u[o + W_STATE] = 0;
    u[o + W_A] = a[0]!; u[o + W_A + 1] = a[1]!; u[o + W_A + 2] = a[2]!; u[o + W_A + 3] = a[3]!;
    u[o + W_B] = b[0]!; u[o + W_B + 1] = b[1]!; u[o + W_B + 2] = b[2]!; u[o + W_B + 3] = b[3]!;
    u[o + W_PKTS] = 0; u[o + W_PKTS + 1] = 0;
    u[o + W_FLAGS] = 0;
    u[o + W_VLAN] = vlan + 1;
    const dd = this.d, p = f * D;
    dd[p + D_OCTETS] = 0; dd[p + D_OCTETS + 1] = 0;
    dd[p + D_CLOSE_AT] = 0;
    this.insertIndex(f, h);
    this.stats.flowsCreated++;
    this.stats.active++;
    return f;
  }

  /** The table is full: emit and drop the least recently seen flows (a small batch, one scan). */
  private evictOldest(): void {
    const u = this.u, dd = this.d;
    let lo = Infinity, hi = -Infinity;
    for (let f = 0; f < this.highWater; f++) {
      if (u[f * W + W_META] === 0) continue;
      const t = dd[f * D + D_TOUCHED]!;
      if (t < lo) lo = t;
      if (t > hi) hi = t;
    }
    const cutoff = lo + (hi - lo) * EVICT_FRACTION;
    for (let f = 0; f < this.highWater; f++) {
      if (u[f * W + W_META] !== 0 && dd[f * D + D_TOUCHED]! <= cutoff) {
        this.stats.evicted++;
        this.remove(f);
      }
    }
  }

  /** Emits the pending update (if any) and frees the flow. */
  private remove(f: number): void {
    if (this.pending(f)) this.emit(f);
    this.deleteIndex(f);
    this.u[f * W + W_META] = 0;
    this.free[this.freeTop++] = f;
    this.stats.active--;
  }

  private emit(f: number): void {
    const u = this.u, dd = this.d, o = f * W, p = f * D;
    const meta = u[o + W_META]!;
    const fam = meta & 0xff, proto = meta >>> 8;
    const ports = u[o + W_PORTS]!, flags = u[o + W_FLAGS]!;
    const rec: FlowRecord = {
      start: dd[p + D_FIRST]!,
      end: dd[p + D_LAST]!,
      proto,
      src: this.addrText(o + W_A, fam),
      dst: this.addrText(o + W_B, fam),
      sport: ports >>> 16,
      dport: ports & 0xffff,
      pkts: u[o + W_PKTS]!,
      bytes: dd[p + D_OCTETS]!,
      rpkts: u[o + W_PKTS + 1]!,
      rbytes: dd[p + D_OCTETS + 1]!,
      flags: flags & 0xff,
      rflags: flags >>> 8,
      outcome: outcomeOf(proto, u[o + W_STATE]!),
      exporter: this.exporter,
    };
    if (u[o + W_VLAN]! > 0) rec.vlan = u[o + W_VLAN]! - 1;
    u[o + W_PKTS] = 0; u[o + W_PKTS + 1] = 0;
    u[o + W_FLAGS] = 0;
    dd[p + D_OCTETS] = 0; dd[p + D_OCTETS + 1] = 0;
    this.stats.records++;
    this.sink(rec);
  }

  private addrText(at: number, fam: number): string {
    const u = this.u;
    if (fam === 4) return ipv4ToString(u[at]!);
    const t = this.text6;
    for (let i = 0; i < 4; i++) {
      const w = u[at + i]!;
      t[4 * i] = w >>> 24; t[4 * i + 1] = w >>> 16; t[4 * i + 2] = w >>> 8; t[4 * i + 3] = w;
    }
    return ipv6ToString(t);
  }

  // --- index ---

  private insertIndex(f: number, h: number): void {
    let i = h & this.mask;
    while (this.index[i] !== 0) i = (i + 1) & this.mask;
    this.index[i] = f + 1;
  }

  /** Linear-probing delete by backward shift: no tombstones, probe chains stay short. */
  private deleteIndex(f: number): void {
    const index = this.index, mask = this.mask, u = this.u;
    let i = u[f * W + W_HASH]! & mask;
    while (index[i] !== f + 1) i = (i + 1) & mask;
    for (let j = (i + 1) & mask; index[j] !== 0; j = (j + 1) & mask) {
      const home = u[(index[j]! - 1) * W + W_HASH]! & mask;
      // the entry at j may move into the hole at i unless its home lies cyclically in (i, j]
      const stays = i <= j ? home > i && home <= j : home > i || home <= j;
      if (!stays) {
        index[i] = index[j]!;
        i = j;
      }
    }
    index[i] = 0;
  }

  private grow(cap: number): void {
    const buf = new ArrayBuffer(cap * W * 4);
    const u = new Uint32Array(buf);
    u.set(this.u);
    this.u = u;
    this.d = new Float64Array(buf);
    const free = new Int32Array(cap);
    free.set(this.free);
    this.free = free;
    this.cap = cap;
    let slots = 1;
    while (slots < cap * 2) slots <<= 1;
    this.index = new Int32Array(slots);
    this.mask = slots - 1;
    for (let f = 0; f < this.highWater; f++) if (u[f * W + W_META] !== 0) this.insertIndex(f, u[f * W + W_HASH]!);
  }
}

function sameAddr(u: Uint32Array, at: number, w: Uint32Array, fam: number): boolean {
  if (u[at] !== w[0]) return false;
  return fam === 4 || (u[at + 1] === w[1] && u[at + 2] === w[2] && u[at + 3] === w[3]);
}
