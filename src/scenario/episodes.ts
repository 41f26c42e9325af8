import { ACTIVITIES, FILE_SERVER, RECORDS_DB, SERVICES, TELEMETRY } from './larkspur.js';
import { ephemeralPort, type World } from './background.js';
import { ACK, RST, SYN, type Endpoint } from './packets.js';
import { DnsLookup, TcpSession, UdpStream } from './sessions.js';
import { Actor, type Sim } from './sim.js';
import { Prng } from './prng.js';
import { INCIDENT_EPISODES, type Slot } from './schedule.js';
import type { TruthEpisode } from './truth.js';

/** Who does what in the incident (docs/scenario.md). */
export const CAST = {
  verticalScanner: '192.168.60.23',
  horizontalScanner: '10.60.3.33',
  floodTarget: RECORDS_DB,
  surgeHost: '10.60.2.40',
  uploader: '10.60.1.31',
  uploadPeer: '203.0.113.200',
} as const;

const iso = (ms: number) => new Date(ms).toISOString();

/** How a probed target answers a SYN. */
const ANSWER_NONE = 0, ANSWER_CLOSED = 1, ANSWER_OPEN = 2;

/**
 * SYN probes to a list of (address, port) targets at even spacing. Each probe is answered per the
 * target: `open` gets SYN-ACK and then the prober's RST, `closed` gets RST-ACK, `absent` nothing.
 */
class ProbeSweep extends Actor {
  private i = 0;
  private step = 0;
  private t0 = 0;
  private seq = 0;
  constructor(private readonly from: Endpoint, private readonly targets: Endpoint[], private readonly ports: Uint16Array,
    private readonly answer: Uint8Array, private readonly sport: number, startUs: number, private readonly gapUs: number,
    private readonly rttUs: number, private readonly rng: Prng) {
    super();
    this.next = startUs;
    this.benign = false;
  }

  fire(sim: Sim): boolean {
    const dst = this.targets[this.i]!, port = this.ports[this.i]!, ans = this.answer[this.i]!;
    switch (this.step) {
      case 0:
        this.t0 = this.next;
        this.seq = this.rng.u32();
        sim.tcp(this, this.from, dst, this.sport, port, this.seq, 0, SYN, 0);
        if (ans === ANSWER_NONE) return this.advance();
        this.step = 1;
        this.next += this.rttUs;
        return true;
      case 1:
        if (ans === ANSWER_CLOSED) {
          sim.tcp(this, dst, this.from, port, this.sport, 0, this.seq + 1, RST | ACK, 0);
          return this.advance();
        }
        sim.tcp(this, dst, this.from, port, this.sport, this.rng.u32(), this.seq + 1, SYN | ACK, 0);
        this.step = 2;
        this.next += 30;
        return true;
      default:
        sim.tcp(this, this.from, dst, this.sport, port, this.seq + 1, 0, RST, 0);
        return this.advance();
    }
  }

  private advance(): boolean {
    this.step = 0;
    this.next = this.t0 + this.gapUs;
    return ++this.i < this.targets.length;
  }
}


/** SYNs from a pool of spoofed outside sources to one service, Poisson at `perSec`. */
class SynFlood extends Actor {
  readonly used: Uint8Array;
  constructor(private readonly sources: Endpoint[], private readonly target: Endpoint, private readonly port: number,
    private readonly meanGapUs: number, startUs: number, private readonly endUs: number, private readonly rng: Prng) {
    super();
    this.next = startUs;
    this.benign = false;
    this.used = new Uint8Array(sources.length);
  }
  fire(sim: Sim): boolean {
    const k = this.rng.int(this.sources.length);
    this.used[k] = 1;
    sim.tcp(this, this.sources[k]!, this.target, 1024 + this.rng.int(64512), this.port, this.rng.u32(), 0, SYN, 0);
    this.next += 1 + Math.round(this.rng.exp(this.meanGapUs));
    return this.next < this.endUs;
  }
}

function shuffle(rng: Prng, a: number[]): void {
  for (let i = a.length - 1; i > 0; i--) {
    const j = rng.int(i + 1);
    const t = a[i]!; a[i] = a[j]!; a[j] = t;
  }
}

/** Outside addresses no benign process uses: spoofed SYN sources. */
function spoofPool(w: World, rng: Prng, n: number): Endpoint[] {
  const taken = new Set<string>([...Object.values(SERVICES).map((s) => s.addr), '192.0.2.53', '198.51.100.53', CAST.uploadPeer]);
  const nets = ['198.51.100.', '203.0.113.', '192.0.2.'];
  const out = new Map<string, Endpoint>();
  while (out.size < n) {
    const net = rng.pick(nets);
    const last = 1 + rng.int(254);
    if (net !== '203.0.113.' && last >= 150 && last < 250) continue; // churn range
    const a = net + last;
    if (!taken.has(a) && !out.has(a)) out.set(a, w.cache.get(a));
  }
  return [...out.values()];
}

/** Average bytes a minute a role's activities send (log-normal means), for the surge's 50x. */
function normalBytesPerMinute(w: World, addr: string): number {
  const h = w.byAddr.get(addr)!;
  let perHour = 0;
  for (const a of ACTIVITIES[h.spec.role]) perHour += a.perHour * a.up[0] * Math.exp(a.up[1] ** 2 / 2);
  return (perHour * w.scale * w.volume) / 60 + ((TELEMETRY.payload + 28) * 60) / TELEMETRY.everySec;
}

/**
 * Adds one planned episode to the simulation; returns its truth entry, which `settle` completes after
 * the run (the flood's attackers are the spoofed sources actually used).
 */
export function addEpisode(w: World, slot: Slot, n: number): { truth: TruthEpisode; settle?: () => void } {
  const sim = w.sim;
  // each episode draws from its own stream: the background is the same with or without it
  const rng = new Prng((w.seed ^ Math.imul(INCIDENT_EPISODES.indexOf(slot.name) + 1, 0x9e3779b9)) >>> 0);
  const startUs = slot.start * 1000, endUs = slot.end * 1000, durUs = endUs - startUs;
  const ep = (family: TruthEpisode['family'], kind: string, attackers: string[], victims: string[]): TruthEpisode =>
    ({ id: `E${n}-${slot.name}`, family, kind, attackers, victims, start: iso(slot.start), end: iso(slot.end) });
  const tag = (a: Actor, x: string, y: string) => { a.hostA = w.index.get(x) ?? -1; a.hostB = w.index.get(y) ?? -1; a.benign = false; };

  switch (slot.name) {
    case 'vertical-scan': {
      const scanner = w.byAddr.get(CAST.verticalScanner)!;
      const ports = Array.from({ length: 1024 }, (_, i) => i + 1);
      shuffle(rng, ports);
      const chosen = ports.slice(0, 1000);
      const target = w.cache.get(FILE_SERVER, true);
      const answer = Uint8Array.from(chosen, (p) => (p === 445 || p === 139 ? ANSWER_OPEN : ANSWER_CLOSED));
      const a = new ProbeSweep(scanner.ep, chosen.map(() => target), Uint16Array.from(chosen), answer, ephemeralPort(rng),
        startUs, Math.floor(durUs / chosen.length), 500, rng);
      tag(a, CAST.verticalScanner, FILE_SERVER);
      sim.add(a);
      return { truth: ep('scan', 'vertical-scan', [CAST.verticalScanner], [FILE_SERVER]) };
    }
    case 'horizontal-scan': {
      const targets: Endpoint[] = [];
      const answer: number[] = [];
      const existing: string[] = [];
      for (const site of [1, 2]) {
        for (let last = 1; last <= 254; last++) {
          const a = `10.60.${site}.${last}`;
          const live = w.byAddr.has(a);
          if (live) existing.push(a);
          targets.push(w.cache.get(a, true));
          answer.push(live ? ANSWER_CLOSED : ANSWER_NONE);
        }
      }
      const a = new ProbeSweep(w.byAddr.get(CAST.horizontalScanner)!.ep, targets, new Uint16Array(targets.length).fill(445),
        Uint8Array.from(answer), ephemeralPort(rng), startUs, Math.floor(durUs / targets.length), 700, rng);
      tag(a, CAST.horizontalScanner, '');
      sim.add(a);
      for (const x of existing) sim.markActive(w.index.get(x)!); // they answer with RST
      return { truth: ep('scan', 'horizontal-scan', [CAST.horizontalScanner], existing) };
    }
    case 'syn-flood': {
      const pool = spoofPool(w, rng, 400);
      const perSec = w.attacks.synPerSec ?? Math.max(20, 300 * w.scale);
      const a = new SynFlood(pool, w.cache.get(CAST.floodTarget, true), 443, 1e6 / perSec, startUs, endUs, rng);
      tag(a, CAST.floodTarget, '');
      sim.add(a);
      const truth = ep('flood', 'fan-in-flood', [], [CAST.floodTarget]);
      const settle = () => { truth.attackers = pool.filter((_, i) => a.used[i] !== 0).map((e) => e.text).sort(); };
      return { truth, settle };
    }
    case 'udp-surge': {
      const host = w.byAddr.get(CAST.surgeHost)!;
      const bytesPerSec = (w.attacks.surgeBytesPerMin ?? 50 * normalBytesPerMinute(w, CAST.surgeHost)) / 60;
      const payload = 1200;
      const a = new UdpStream(host.ep, w.cache.get(TELEMETRY.addr), 41000 + rng.int(1000), TELEMETRY.port, payload,
        (1e6 * (payload + 28)) / bytesPerSec, startUs, endUs, 0, rng);
      tag(a, CAST.surgeHost, '');
      sim.add(a);
      return { truth: ep('flood', 'volume-surge', [CAST.surgeHost], [TELEMETRY.addr]) };
    }
    case 'upload': {
      const host = w.byAddr.get(CAST.uploader)!;
      const peer = w.cache.get(CAST.uploadPeer);
      const bytes = w.attacks.uploadBytes ?? Math.max(10e6, Math.round(200e6 * w.scale * w.volume));
      const dns = new DnsLookup(host.ep, w.resolver, w.upstream[0]!, ephemeralPort(rng), startUs - 50_000, true, rng);
      tag(dns, CAST.uploader, '');
      sim.add(dns);
      const a = new TcpSession({
        client: host.ep, server: peer, sport: ephemeralPort(rng), dport: 443, up: bytes, down: 40_000, rounds: 1,
        rttUs: 45_000, upRate: bytes / (durUs / 1e6), downRate: 1e6, fate: 'ok',
      }, startUs, rng);
      tag(a, CAST.uploader, '');
      sim.add(a);
      return { truth: ep('unusual-destination', 'unusual-destination', [CAST.uploader], [CAST.uploadPeer]) };
    }
  }
}
