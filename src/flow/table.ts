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
  /** Flows held at once; when full the least recently seen flow is emitted and evicted. */
  maxFlows: number;
  /** FlowRecord.exporter of every record. */
  exporter: string;
}

/** Packets this late (event time) still make it into the window they belong to before it is swept. */
export const ALLOWED_LATENESS_MS = 5_000;
/** A closed TCP flow waits this long (event time) for its last ACK before it is removed. */
export const TCP_LINGER_MS = 2_000;

const INITIAL_CAPACITY = 1 << 14;

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
 * Bidirectional 5-tuple flow table (METHODS.md 3.1, conventions in record.ts). Flows live in parallel
 * typed arrays indexed by a flow id; an open-addressing index (linear probing, backward-shift delete)
 * maps the direction-free key hash to the id. Flows are kept in a least-recently-seen list for the idle
 * timeout and eviction. A FlowRecord is made only when an update is cut: at a window boundary, an
 * active or idle timeout, a TCP close, an eviction, or `flush`.
 */
export class FlowTable {
  readonly stats: FlowTableStats = { packets: 0, bytes: 0, flowsCreated: 0, records: 0, evicted: 0, active: 0 };

  private readonly windowMs: number;
  private readonly idleMs: number;
  private readonly activeMs: number;
  private readonly maxFlows: number;
  private readonly exporter: string;

  // --- per-flow columns (id-indexed; address and counter columns hold 4 and 2 slots per id) ---
  private cap = 0;
  private hash = new Uint32Array(0);
  /** 0 = free slot, else 4 or 6. */
  private family = new Uint8Array(0);
  private proto = new Uint8Array(0);
  private addrA = new Uint32Array(0);
  private addrB = new Uint32Array(0);
  private portA = new Uint16Array(0);
  private portB = new Uint16Array(0);
  private vlan = new Int16Array(0);
  private state = new Uint16Array(0);
  private pkts = new Uint32Array(0);
  private octets = new Float64Array(0);
  private flags = new Uint8Array(0);
  private first = new Float64Array(0);
  private last = new Float64Array(0);
  /** End of the window the pending update belongs to (Infinity without window cuts). */
  private windowEnd = new Float64Array(0);
  /** Table clock when last seen: the least-recently-seen order. */
  private touched = new Float64Array(0);
  private closeAt = new Float64Array(0);
  private prev = new Int32Array(0);
  private next = new Int32Array(0);
  private free = new Int32Array(0);
  private freeTop = 0;
  /** Ids below this have been used at least once. */
  private highWater = 0;

  // --- index: flow id + 1 per slot, 0 = empty ---
  private index = new Int32Array(0);
  private mask = 0;

  private lruHead = -1;
  private lruTail = -1;
  // closing flows in the order they closed (close times only grow, the clock never goes back)
  private closing = new Int32Array(256);
  private closingAt = new Float64Array(256);
  private closingHead = 0;
  private closingLen = 0;

  private clock = -Infinity;
  private nextSweepAt = NaN;

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
    const s = this.keyS, d = this.keyD;
    if (fam === 4) {
      s[0] = v.src4; s[1] = 0; s[2] = 0; s[3] = 0;
      d[0] = v.dst4; d[1] = 0; d[2] = 0; d[3] = 0;
    } else {
      s.set(v.src6);
      d.set(v.dst6);
    }
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
        // the quote lookup used the scratch keys: refill them
        if (fam === 4) { s[0] = v.src4; d[0] = v.dst4; s[1] = s[2] = s[3] = d[1] = d[2] = d[3] = 0; } else { s.set(v.src6); d.set(v.dst6); }
      }
    }
    const h = flowHash(fam, proto, s, sport, d, dport);
    let f = this.find(h, fam, proto, s, sport, d, dport);
    if (f < 0) f = reply ? this.create(h, fam, proto, d, dport, s, sport, v.vlan) : this.create(h, fam, proto, s, sport, d, dport, v.vlan);
    this.count(f, reply ? 1 : this.dir, tsMs, v.ipBytes, v.tcpFlags);
  }

  /** Moves event time forward to `tsMs` (never back), cutting and expiring what is due. */
  advance(tsMs: number): void {
    if (!(tsMs > this.clock)) return;
    this.clock = tsMs;
    if (this.windowMs > 0) {
      if (Number.isNaN(this.nextSweepAt)) this.nextSweepAt = this.windowStart(tsMs) + this.windowMs + ALLOWED_LATENESS_MS;
      else if (tsMs >= this.nextSweepAt) this.sweepWindows(tsMs);
    }
    while (this.closingLen > 0 && this.closingAt[this.closingHead]! <= tsMs) {
      const f = this.closing[this.closingHead]!;
      const at = this.closingAt[this.closingHead]!;
      this.closingHead = (this.closingHead + 1) % this.closing.length;
      this.closingLen--;
      // the id may have been freed (idle, eviction) and reused since: only the same close counts
      if (this.family[f] !== 0 && (this.state[f]! & St.Closing) !== 0 && this.closeAt[f] === at) this.remove(f);
    }
    while (this.lruHead >= 0 && tsMs - this.touched[this.lruHead]! >= this.idleMs) this.remove(this.lruHead);
  }

  /** End of input: emits every pending update and empties the table. */
  flush(): void {
    for (let f = 0; f < this.highWater; f++) if (this.family[f] !== 0) this.remove(f);
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
    for (let f = 0; f < this.highWater; f++) {
      if (this.family[f] !== 0 && this.windowEnd[f]! <= boundary && this.pending(f)) this.emit(f);
    }
    this.nextSweepAt = boundary + this.windowMs + ALLOWED_LATENESS_MS;
  }

  private pending(f: number): boolean {
    return this.pkts[2 * f]! + this.pkts[2 * f + 1]! > 0;
  }

  private count(f: number, dir: number, ts: number, octets: number, tcpFlags: number): void {
    if (this.pending(f) && (ts >= this.windowEnd[f]! || ts - this.first[f]! >= this.activeMs)) this.emit(f);
    if (!this.pending(f)) {
      this.first[f] = ts;
      this.last[f] = ts;
      this.windowEnd[f] = this.windowMs > 0 ? this.windowStart(ts) + this.windowMs : Infinity;
    } else if (ts > this.last[f]!) {
      this.last[f] = ts;
    } else if (ts < this.first[f]!) {
      this.first[f] = ts;
    }
    const c = 2 * f + dir;
    this.pkts[c]!++;
    this.octets[c]! += octets;
    this.flags[c]! |= tcpFlags;
    let state = this.state[f]!;
    if (dir === 1) state |= St.ReverseSeen;
    if (this.proto[f] === 6) {
      state = tcpStep(state, dir, tcpFlags);
      if ((state & St.Closing) === 0 && tcpEnded(state, tcpFlags)) {
        state |= St.Closing;
        this.queueClose(f, this.clock + TCP_LINGER_MS);
      }
    }
    this.state[f] = state;
    this.touch(f);
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
    if (f >= 0) this.state[f]! |= St.IcmpRejected;
  }

  /** Flow id for the key, or -1; sets `this.dir` (0 when the sender is the flow's initiator). */
  private find(h: number, fam: number, proto: number, s: Uint32Array, sport: number, d: Uint32Array, dport: number): number {
    const index = this.index, mask = this.mask;
    for (let i = h & mask; ; i = (i + 1) & mask) {
      const e = index[i]!;
      if (e === 0) return -1;
      const f = e - 1;
      if (this.hash[f] !== h || this.family[f] !== fam || this.proto[f] !== proto) continue;
      const pa = this.portA[f]!, pb = this.portB[f]!;
      if (pa === sport && pb === dport && this.addrEq(this.addrA, f, s, fam) && this.addrEq(this.addrB, f, d, fam)) { this.dir = 0; return f; }
      if (pa === dport && pb === sport && this.addrEq(this.addrA, f, d, fam) && this.addrEq(this.addrB, f, s, fam)) { this.dir = 1; return f; }
    }
  }

  private addrEq(col: Uint32Array, f: number, w: Uint32Array, fam: number): boolean {
    const o = 4 * f;
    if (col[o] !== w[0]) return false;
    return fam === 4 || (col[o + 1] === w[1] && col[o + 2] === w[2] && col[o + 3] === w[3]);
  }

  private create(h: number, fam: number, proto: number, a: Uint32Array, aPort: number, b: Uint32Array, bPort: number, vlan: number): number {
    if (this.stats.active >= this.maxFlows && this.lruHead >= 0) {
      this.stats.evicted++;
      this.remove(this.lruHead);
    }
    let f: number;
    if (this.freeTop > 0) f = this.free[--this.freeTop]!;
    else {
      if (this.highWater === this.cap) this.grow(Math.min(this.cap * 2, this.maxFlows));
      f = this.highWater++;
    }
    this.hash[f] = h;
    this.family[f] = fam;
    this.proto[f] = proto;
    this.addrA.set(a, 4 * f);
    this.addrB.set(b, 4 * f);
    this.portA[f] = aPort;
    this.portB[f] = bPort;
    this.vlan[f] = vlan;
    this.state[f] = 0;
    this.closeAt[f] = 0;
    this.pkts[2 * f] = this.pkts[2 * f + 1] = 0;
    this.octets[2 * f] = this.octets[2 * f + 1] = 0;
    this.flags[2 * f] = this.flags[2 * f + 1] = 0;
    this.prev[f] = this.next[f] = -1;
    this.insertIndex(f, h);
    this.stats.flowsCreated++;
    this.stats.active++;
    this.dir = 0;
    return f;
  }

  /** Emits the pending update (if any) and frees the flow. */
  private remove(f: number): void {
    if (this.pending(f)) this.emit(f);
    this.deleteIndex(f);
    this.unlink(f);
    this.family[f] = 0;
    this.free[this.freeTop++] = f;
    this.stats.active--;
  }

  private emit(f: number): void {
    const c = 2 * f;
    const fam = this.family[f]!;
    const rec: FlowRecord = {
      start: this.first[f]!,
      end: this.last[f]!,
      proto: this.proto[f]!,
      src: this.addrText(this.addrA, f, fam),
      dst: this.addrText(this.addrB, f, fam),
      sport: this.portA[f]!,
      dport: this.portB[f]!,
      pkts: this.pkts[c]!,
      bytes: this.octets[c]!,
      rpkts: this.pkts[c + 1]!,
      rbytes: this.octets[c + 1]!,
      flags: this.flags[c]!,
      rflags: this.flags[c + 1]!,
      outcome: outcomeOf(this.proto[f]!, this.state[f]!),
      exporter: this.exporter,
    };
    if (this.vlan[f]! >= 0) rec.vlan = this.vlan[f]!;
    this.pkts[c] = this.pkts[c + 1] = 0;
    this.octets[c] = this.octets[c + 1] = 0;
    this.flags[c] = this.flags[c + 1] = 0;
    this.stats.records++;
    this.sink(rec);
  }

  private addrText(col: Uint32Array, f: number, fam: number): string {
    const o = 4 * f;
    if (fam === 4) return ipv4ToString(col[o]!);
    const t = this.text6;
    for (let i = 0; i < 4; i++) {
      const w = col[o + i]!;
      t[4 * i] = w >>> 24; t[4 * i + 1] = w >>> 16; t[4 * i + 2] = w >>> 8; t[4 * i + 3] = w;
    }
    return ipv6ToString(t);
  }

  // --- least-recently-seen list ---

  private touch(f: number): void {
    this.touched[f] = this.clock;
    if (this.lruTail === f) return;
    this.unlink(f);
    this.prev[f] = this.lruTail;
    this.next[f] = -1;
    if (this.lruTail >= 0) this.next[this.lruTail] = f;
    else this.lruHead = f;
    this.lruTail = f;
  }

  private unlink(f: number): void {
    const p = this.prev[f]!, n = this.next[f]!;
    if (p >= 0) this.next[p] = n;
    else if (this.lruHead === f) this.lruHead = n;
    else return; // not in the list
    if (n >= 0) this.prev[n] = p;
    else this.lruTail = p;
    this.prev[f] = this.next[f] = -1;
  }

  // --- index ---

  private insertIndex(f: number, h: number): void {
    let i = h & this.mask;
    while (this.index[i] !== 0) i = (i + 1) & this.mask;
    this.index[i] = f + 1;
  }

  /** Linear-probing delete by backward shift: no tombstones, probe chains stay short. */
  private deleteIndex(f: number): void {
    const index = this.index, mask = this.mask;
    let i = this.hash[f]! & mask;
    while (index[i] !== f + 1) i = (i + 1) & mask;
    for (let j = (i + 1) & mask; index[j] !== 0; j = (j + 1) & mask) {
      const home = this.hash[index[j]! - 1]! & mask;
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
    const old = this.cap;
    const g = <T extends Uint32Array | Uint16Array | Uint8Array | Int16Array | Int32Array | Float64Array>(a: T, per: number, make: new (n: number) => T): T => {
      const b = new make(cap * per);
      b.set(a.subarray(0, old * per) as never);
      return b;
    };
    this.hash = g(this.hash, 1, Uint32Array);
    this.family = g(this.family, 1, Uint8Array);
    this.proto = g(this.proto, 1, Uint8Array);
    this.addrA = g(this.addrA, 4, Uint32Array);
    this.addrB = g(this.addrB, 4, Uint32Array);
    this.portA = g(this.portA, 1, Uint16Array);
    this.portB = g(this.portB, 1, Uint16Array);
    this.vlan = g(this.vlan, 1, Int16Array);
    this.state = g(this.state, 1, Uint16Array);
    this.pkts = g(this.pkts, 2, Uint32Array);
    this.octets = g(this.octets, 2, Float64Array);
    this.flags = g(this.flags, 2, Uint8Array);
    this.first = g(this.first, 1, Float64Array);
    this.last = g(this.last, 1, Float64Array);
    this.windowEnd = g(this.windowEnd, 1, Float64Array);
    this.touched = g(this.touched, 1, Float64Array);
    this.closeAt = g(this.closeAt, 1, Float64Array);
    this.prev = g(this.prev, 1, Int32Array);
    this.next = g(this.next, 1, Int32Array);
    this.free = g(this.free, 1, Int32Array);
    this.cap = cap;
    let slots = 1;
    while (slots < cap * 2) slots <<= 1;
    this.index = new Int32Array(slots);
    this.mask = slots - 1;
    for (let f = 0; f < this.highWater; f++) if (this.family[f] !== 0) this.insertIndex(f, this.hash[f]!);
  }
}
