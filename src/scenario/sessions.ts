import { ACK, FIN, PSH, RST, SYN, type Endpoint } from './packets.js';
import type { Prng } from './prng.js';
import { Actor, type Sim } from './sim.js';

/** How a TCP connection attempt ends (benign rates are set by the caller, about 1 % failures). */
export type TcpFate = 'ok' | 'refused' | 'timeout';

export interface TcpPlan {
  client: Endpoint;
  server: Endpoint;
  sport: number;
  dport: number;
  /** Client-to-server and server-to-client payload octets, split evenly over `rounds`. */
  up: number;
  down: number;
  rounds: number;
  rttUs: number;
  /** Sending rates, bytes per second. */
  upRate: number;
  downRate: number;
  fate: TcpFate;
}

const enum T { Syn, Refuse, SynAck, Ack3, Up, UpAck, Down, DownAck, Fin1, Fin2, Fin3 }

/**
 * One TCP connection: handshake, request/response rounds (segments of one MSS, an ACK every second
 * segment), FIN exchange. Refused attempts get RST-ACK; timed-out ones send the SYN three times
 * (after 1 s and 2 s more), as stacks retransmit (RFC 6298 initial RTO of 1 s).
 */
export class TcpSession extends Actor {
  private state = T.Syn;
  private cseq: number;
  private sseq: number;
  private left = 0;
  private segs = 0;
  private roundsLeft: number;
  private tSeg = 0;
  private tries = 0;
  private readonly mss: number;
  private readonly upGap: number;
  private readonly downGap: number;

  constructor(private readonly p: TcpPlan, startUs: number, private readonly rng: Prng) {
    super();
    this.next = startUs;
    this.cseq = rng.u32();
    this.sseq = rng.u32();
    this.roundsLeft = Math.max(1, p.rounds);
    this.mss = p.client.v6 ? 1440 : 1460;
    this.upGap = (this.mss / p.upRate) * 1e6;
    this.downGap = (this.mss / p.downRate) * 1e6;
  }

  fire(sim: Sim): boolean {
    const p = this.p;
    const c = p.client, s = p.server;
    switch (this.state) {
      case T.Syn:
        sim.tcp(this, c, s, p.sport, p.dport, this.cseq, 0, SYN, 0);
        if (p.fate === 'timeout') {
          this.tries++;
          this.next += 1e6 * this.tries;
          return this.tries < 3;
        }
        this.state = p.fate === 'refused' ? T.Refuse : T.SynAck;
        this.next += p.rttUs;
        return true;
      case T.Refuse:
        sim.tcp(this, s, c, p.dport, p.sport, 0, this.cseq + 1, RST | ACK, 0);
        return false;
      case T.SynAck:
        sim.tcp(this, s, c, p.dport, p.sport, this.sseq, this.cseq + 1, SYN | ACK, 0);
        this.cseq = (this.cseq + 1) >>> 0;
        this.sseq = (this.sseq + 1) >>> 0;
        this.state = T.Ack3;
        this.next += 40;
        return true;
      case T.Ack3:
        sim.tcp(this, c, s, p.sport, p.dport, this.cseq, this.sseq, ACK, 0);
        this.startRound();
        this.next += 200;
        return true;
      case T.Up:
      case T.Down: {
        const up = this.state === T.Up;
        const seg = this.left < this.mss ? this.left : this.mss;
        if (up) {
          sim.tcp(this, c, s, p.sport, p.dport, this.cseq, this.sseq, PSH | ACK, seg);
          this.cseq = (this.cseq + seg) >>> 0;
        } else {
          sim.tcp(this, s, c, p.dport, p.sport, this.sseq, this.cseq, PSH | ACK, seg);
          this.sseq = (this.sseq + seg) >>> 0;
        }
        this.left -= seg;
        this.segs++;
        this.tSeg = this.next;
        const gap = (up ? this.upGap : this.downGap) * (0.8 + 0.4 * this.rng.float());
        if ((this.segs & 1) === 0 || this.left === 0) {
          this.state = up ? T.UpAck : T.DownAck;
          this.next += Math.round(Math.min(p.rttUs, gap * 0.5));
        } else {
          this.next += Math.max(1, Math.round(gap));
        }
        return true;
      }
      case T.UpAck:
      case T.DownAck: {
        const up = this.state === T.UpAck;
        if (up) sim.tcp(this, s, c, p.dport, p.sport, this.sseq, this.cseq, ACK, 0);
        else sim.tcp(this, c, s, p.sport, p.dport, this.cseq, this.sseq, ACK, 0);
        const gapBase = up ? this.upGap : this.downGap;
        if (this.left > 0) {
          this.state = up ? T.Up : T.Down;
          this.next = Math.max(this.next + 1, Math.round(this.tSeg + gapBase));
        } else if (up) {
          this.state = T.Down;
          this.left = Math.max(1, Math.round(p.down / Math.max(1, p.rounds)));
          this.segs = 0;
          this.next += p.rttUs + Math.round(this.rng.exp(2000));
        } else if (--this.roundsLeft > 0) {
          this.startRound();
          this.next += Math.round(this.rng.exp(150_000));
        } else {
          this.state = T.Fin1;
          this.next += Math.round(this.rng.exp(50_000)) + 1;
        }
        return true;
      }
      case T.Fin1:
        sim.tcp(this, c, s, p.sport, p.dport, this.cseq, this.sseq, FIN | ACK, 0);
        this.cseq = (this.cseq + 1) >>> 0;
        this.state = T.Fin2;
        this.next += p.rttUs;
        return true;
      case T.Fin2:
        sim.tcp(this, s, c, p.dport, p.sport, this.sseq, this.cseq, FIN | ACK, 0);
        this.sseq = (this.sseq + 1) >>> 0;
        this.state = T.Fin3;
        this.next += 40;
        return true;
      case T.Fin3:
        sim.tcp(this, c, s, p.sport, p.dport, this.cseq, this.sseq, ACK, 0);
        return false;
    }
  }

  private startRound(): void {
    this.state = T.Up;
    this.left = Math.max(1, Math.round(this.p.up / Math.max(1, this.p.rounds)));
    this.segs = 0;
  }
}

const enum D { Query, Forward, Upstream, Answer }

/**
 * A DNS lookup over UDP 53: client to the inside resolver; on a cache miss the resolver asks an
 * upstream server first. A small share of queries get no answer.
 */
export class DnsLookup extends Actor {
  private state = D.Query;
  private readonly qLen: number;
  private readonly aLen: number;
  private readonly fwdPort: number;

  constructor(private readonly client: Endpoint, private readonly resolver: Endpoint, private readonly upstream: Endpoint | null,
    private readonly sport: number, startUs: number, private readonly answered: boolean, private readonly rng: Prng) {
    super();
    this.next = startUs;
    this.qLen = 28 + rng.int(30);
    this.aLen = this.qLen + 16 + rng.int(180);
    this.fwdPort = 1024 + rng.int(64000);
  }

  fire(sim: Sim): boolean {
    switch (this.state) {
      case D.Query:
        sim.udp(this, this.client, this.resolver, this.sport, 53, this.qLen);
        if (!this.answered) return false;
        this.state = this.upstream ? D.Forward : D.Answer;
        this.next += this.upstream ? 150 : 300 + this.rng.int(400);
        return true;
      case D.Forward:
        sim.udp(this, this.resolver, this.upstream!, this.fwdPort, 53, this.qLen + 11);
        this.state = D.Upstream;
        this.next += 15_000 + this.rng.int(25_000);
        return true;
      case D.Upstream:
        sim.udp(this, this.upstream!, this.resolver, 53, this.fwdPort, this.aLen + 11);
        this.state = D.Answer;
        this.next += 120;
        return true;
      case D.Answer:
        sim.udp(this, this.resolver, this.client, 53, this.sport, this.aLen);
        return false;
    }
  }
}

/** A request/answer UDP exchange such as NTP (RFC 5905: 48-octet messages). */
export class UdpExchange extends Actor {
  private answered = false;
  constructor(private readonly client: Endpoint, private readonly server: Endpoint, private readonly sport: number,
    private readonly dport: number, private readonly qLen: number, private readonly aLen: number,
    startUs: number, private readonly rttUs: number) {
    super();
    this.next = startUs;
  }

  fire(sim: Sim): boolean {
    if (!this.answered) {
      sim.udp(this, this.client, this.server, this.sport, this.dport, this.qLen);
      this.answered = true;
      this.next += this.rttUs;
      return true;
    }
    sim.udp(this, this.server, this.client, this.dport, this.sport, this.aLen);
    return false;
  }
}

/** `count` ICMP echo requests one second apart, each answered after one RTT. */
export class EchoSeries extends Actor {
  private seq = 0;
  private replyDue = false;
  constructor(private readonly from: Endpoint, private readonly to: Endpoint, private readonly id: number,
    private readonly count: number, startUs: number, private readonly rttUs: number) {
    super();
    this.next = startUs;
  }

  fire(sim: Sim): boolean {
    if (!this.replyDue) {
      sim.echo(this, this.from, this.to, false, this.id, this.seq, 56);
      this.replyDue = true;
      this.next += this.rttUs;
      return true;
    }
    sim.echo(this, this.to, this.from, true, this.id, this.seq, 56);
    this.replyDue = false;
    this.next += 1e6 - this.rttUs;
    return ++this.seq < this.count;
  }
}

/**
 * A one-way UDP stream (datagrams of `payload` octets every `gapUs` with ±20 % jitter) until
 * `endUs`, with a short reply every `replyEvery` datagrams (0: never), as application-level acks.
 */
export class UdpStream extends Actor {
  private sent = 0;
  private replyDue = false;
  private tNext = 0;
  constructor(private readonly src: Endpoint, private readonly dst: Endpoint, private readonly sport: number,
    private readonly dport: number, private readonly payload: number, private readonly gapUs: number,
    startUs: number, private readonly endUs: number, private readonly replyEvery: number, private readonly rng: Prng) {
    super();
    this.next = startUs;
  }

  fire(sim: Sim): boolean {
    if (this.replyDue) {
      sim.udp(this, this.dst, this.src, this.dport, this.sport, 32);
      this.replyDue = false;
      this.next = this.tNext;
      return this.next < this.endUs;
    }
    sim.udp(this, this.src, this.dst, this.sport, this.dport, this.payload);
    this.sent++;
    const gap = Math.max(1, Math.round(this.gapUs * (0.8 + 0.4 * this.rng.float())));
    this.tNext = this.next + gap;
    if (this.replyEvery > 0 && this.sent % this.replyEvery === 0) {
      this.replyDue = true;
      this.next += Math.max(1, Math.min(gap >> 1, 40_000));
      return true;
    }
    this.next = this.tNext;
    return this.next < this.endUs;
  }
}
