import type { PcapWriter } from '../capture/writer.js';
import { FrameBuilder, type Endpoint } from './packets.js';

/**
 * Something that sends packets at points in time: a connection, a DNS exchange, a spawner that starts
 * connections, an attack. `fire` sends what is due at `next`, moves `next` forward and says whether
 * the actor has more to do. Per-packet work reuses the actor's own fields; nothing is allocated.
 */
export abstract class Actor {
  /** Time of the next event, epoch microseconds (integer). */
  next = 0;
  /** Tie-break for equal times: insertion order, so runs are reproducible. */
  order = 0;
  /** Inside host indexes this actor's benign traffic is counted to (-1: none). */
  hostA = -1;
  hostB = -1;
  benign = true;
  abstract fire(sim: Sim): boolean;
}

/** Event loop over actors in time order, writing every packet to one pcap. */
export class Sim {
  readonly fb: FrameBuilder;
  private heap: Actor[] = [];
  private orderSeq = 0;
  /** (host, hour) cells that carried benign traffic; index host * hours + hour. */
  readonly benignHours: Uint8Array;
  /** Hosts that sent or received anything. */
  readonly active: Uint8Array;
  readonly hours: number;

  constructor(readonly writer: PcapWriter, readonly startUs: number, readonly endUs: number,
    readonly hostCount: number, linkType: 1 | 101) {
    this.fb = new FrameBuilder(linkType, writer.snaplen);
    this.hours = Math.ceil((endUs - startUs) / 3.6e9);
    this.benignHours = new Uint8Array(hostCount * this.hours);
    this.active = new Uint8Array(hostCount);
  }

  add(a: Actor): void {
    if (a.next >= this.endUs) return;
    a.order = this.orderSeq++;
    const h = this.heap;
    h.push(a);
    let i = h.length - 1;
    while (i > 0) {
      const p = (i - 1) >> 1;
      if (!before(h[i]!, h[p]!)) break;
      const t = h[i]!; h[i] = h[p]!; h[p] = t;
      i = p;
    }
  }

  /** Runs every actor until the heap is empty or the capture's end is reached. */
  run(): void {
    const h = this.heap;
    while (h.length > 0) {
      const a = h[0]!;
      if (a.next >= this.endUs) break;
      const more = a.fire(this);
      if (more && a.next < this.endUs) {
        this.siftDown(0);
      } else {
        const last = h.pop()!;
        if (h.length > 0) { h[0] = last; this.siftDown(0); }
      }
    }
  }

  private siftDown(i: number): void {
    const h = this.heap;
    const n = h.length;
    for (;;) {
      const l = 2 * i + 1, r = l + 1;
      let m = i;
      if (l < n && before(h[l]!, h[m]!)) m = l;
      if (r < n && before(h[r]!, h[m]!)) m = r;
      if (m === i) return;
      const t = h[i]!; h[i] = h[m]!; h[m] = t;
      i = m;
    }
  }

  tcp(a: Actor, src: Endpoint, dst: Endpoint, sport: number, dport: number, seq: number, ack: number, flags: number, payload: number): void {
    this.emit(a, this.fb.tcp(src, dst, sport, dport, seq, ack, flags, payload));
  }

  udp(a: Actor, src: Endpoint, dst: Endpoint, sport: number, dport: number, payload: number): void {
    this.emit(a, this.fb.udp(src, dst, sport, dport, payload));
  }

  echo(a: Actor, src: Endpoint, dst: Endpoint, reply: boolean, id: number, seq: number, payload: number): void {
    this.emit(a, this.fb.echo(src, dst, reply, id, seq, payload));
  }

  private emit(a: Actor, wire: number): void {
    const t = a.next;
    const sec = Math.floor(t / 1e6);
    this.writer.write(this.fb.buf, 0, wire, wire, sec, (t - sec * 1e6) * 1000);
    if (a.hostA >= 0) this.touch(a.hostA, t, a.benign);
    if (a.hostB >= 0) this.touch(a.hostB, t, a.benign);
  }

  /** Counts a host as present in the data (an episode's answering target). */
  markActive(host: number): void {
    if (host >= 0) this.active[host] = 1;
  }

  private touch(host: number, t: number, benign: boolean): void {
    this.active[host] = 1;
    if (benign) this.benignHours[host * this.hours + Math.floor((t - this.startUs) / 3.6e9)] = 1;
  }
}

function before(a: Actor, b: Actor): boolean {
  return a.next < b.next || (a.next === b.next && a.order < b.order);
}
