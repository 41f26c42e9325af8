import {
  ACTIVITIES, DNS_MISS_RATE, ECHO_CHECKS, HOSTS, RESOLVER, SERVICES, TELEMETRY, UPSTREAM_DNS,
  churnPeer, clinicActivity, hourNoise, type ActivitySpec, type HostSpec,
} from './larkspur.js';
import { EndpointCache } from './endpoints.js';
import type { Endpoint } from './packets.js';
import type { Prng } from './prng.js';
import { DnsLookup, EchoSeries, TcpSession, UdpExchange, UdpStream, type TcpFate } from './sessions.js';
import { Actor, type Sim } from './sim.js';
import type { TruthBenign } from './truth.js';

/** A host at run time: its endpoints and their indexes in the host table. */
export interface HostRt {
  spec: HostSpec;
  ep: Endpoint;
  idx: number;
  ep6: Endpoint | null;
  idx6: number;
  /** Guest phones come and go: [start, end) µs intervals when present; null = always there. */
  present: number[] | null;
}

/** Explicit attack sizes; each defaults to a value derived from scale and volume (docs/scenario.md). */
export interface AttackSizes {
  /** SYN flood rate, SYNs per second. */
  synPerSec?: number;
  /** UDP surge, bytes per minute. */
  surgeBytesPerMin?: number;
  /** Upload size, bytes. */
  uploadBytes?: number;
}

/** Shared state of one incident run. */
export interface World {
  sim: Sim;
  rng: Prng;
  seed: number;
  /** Multiplies connection rates. */
  scale: number;
  /** Multiplies payload sizes per connection. */
  volume: number;
  attacks: AttackSizes;
  hosts: HostRt[];
  byAddr: Map<string, HostRt>;
  /** Host-table index of every inside address (v4 and v6). */
  index: Map<string, number>;
  addresses: string[];
  cache: EndpointCache;
  resolver: Endpoint;
  upstream: Endpoint[];
  churnCount: number;
  benign: TruthBenign[];
}

/** Builds the host table, then the simulation sized for it (`makeSim` gets the number of addresses). */
export function buildWorld(makeSim: (hostCount: number) => Sim, rng: Prng, seed: number, scale: number, volume: number,
  attacks: AttackSizes = {}): World {
  const cache = new EndpointCache();
  const hosts: HostRt[] = [];
  const index = new Map<string, number>();
  const addresses: string[] = [];
  const add = (a: string): number => { index.set(a, addresses.length); addresses.push(a); return addresses.length - 1; };
  for (const spec of HOSTS) {
    const ep = cache.get(spec.addr, true);
    const idx = add(ep.text);
    const ep6 = spec.addr6 ? cache.get(spec.addr6, true) : null;
    const idx6 = ep6 ? add(ep6.text) : -1;
    hosts.push({ spec, ep, idx, ep6, idx6, present: null });
  }
  return {
    sim: makeSim(addresses.length), rng, seed, scale, volume, attacks, hosts, index, addresses, cache,
    byAddr: new Map(hosts.map((h) => [h.spec.addr, h])),
    resolver: cache.get(RESOLVER, true),
    upstream: UPSTREAM_DNS.map((a) => cache.get(a)),
    churnCount: 0,
    benign: [],
  };
}

/** Guest presence: alternating stays (mean 50 min) and absences (mean 80 min) over the span. */
export function planPresence(w: World, h: HostRt): void {
  const { startUs, endUs } = w.sim;
  const iv: number[] = [];
  let t = startUs + Math.round(w.rng.exp(40 * 60e6));
  while (t < endUs) {
    const stay = Math.round(w.rng.exp(50 * 60e6)) + 5 * 60e6;
    iv.push(t, t + stay);
    t += stay + Math.round(w.rng.exp(80 * 60e6));
  }
  h.present = iv;
}

function isPresent(h: HostRt, t: number): boolean {
  const iv = h.present;
  if (!iv) return true;
  for (let i = 0; i < iv.length; i += 2) if (t >= iv[i]! && t < iv[i + 1]!) return true;
  return false;
}

const NOISE_CAP = 2.5;

/** Starts one role activity of one host as a Poisson process thinned by clinic hours and hourly noise. */
class ActivitySpawner extends Actor {
  private readonly meanGapUs: number;
  constructor(private readonly w: World, private readonly h: HostRt, private readonly a: ActivitySpec) {
    super();
    this.meanGapUs = 3.6e9 / (a.perHour * w.scale * NOISE_CAP);
    this.next = w.sim.startUs + Math.round(w.rng.exp(this.meanGapUs));
  }

  fire(): boolean {
    const t = this.next;
    const w = this.w;
    const f = (this.a.clinic ? clinicActivity(t / 1000) : 1) * hourNoise(w.seed, this.h.idx, Math.floor(t / 3.6e9));
    const u = w.rng.float(); // drawn even when absent, so presence changes do not shift the stream
    if (u < f / NOISE_CAP && isPresent(this.h, t)) startActivity(w, this.h, this.a, t);
    this.next = t + 1 + Math.round(w.rng.exp(this.meanGapUs));
    return true;
  }
}

function fate(rng: Prng): TcpFate {
  const u = rng.float();
  return u < 0.005 ? 'refused' : u < 0.01 ? 'timeout' : 'ok';
}

export function ephemeralPort(rng: Prng): number {
  return 49152 + rng.int(16384);
}

/** Starts one connection (with its DNS lookup when the name is outside). */
function startActivity(w: World, h: HostRt, a: ActivitySpec, t: number): void {
  const rng = w.rng;
  let client = h.ep, clientIdx = h.idx;
  let server: Endpoint, port: number, rttMs: number, rate: number, proto: number;
  if (a.service === 'churn') {
    const peer = churnPeer(w.churnCount++);
    server = w.cache.get(peer);
    port = 443; proto = 6; rttMs = 20 + rng.int(40); rate = 2e6;
  } else {
    const useV6 = a.service === 'smb' && h.ep6 !== null;
    const svc = SERVICES[useV6 ? 'smb6' : a.service];
    if (useV6) { client = h.ep6!; clientIdx = h.idx6; }
    server = w.cache.get(svc.addr, w.index.has(svc.addr));
    port = svc.port; proto = svc.proto; rttMs = svc.rttMs; rate = svc.rate;
  }
  const rttUs = Math.max(100, Math.round(rttMs * 1000 * (0.8 + 0.6 * rng.float())));
  let tConn = t;
  if (a.dns && rng.chance(0.6)) {
    const miss = rng.chance(DNS_MISS_RATE);
    const dns = new DnsLookup(h.ep, w.resolver, miss ? rng.pick(w.upstream) : null, ephemeralPort(rng), t, !rng.chance(0.005), rng);
    mark(dns, h.idx, w.index.get(RESOLVER)!);
    w.sim.add(dns);
    tConn = t + 2000 + (miss ? 40_000 : 0) + rng.int(20_000);
  }
  const serverIdx = w.index.get(server.text) ?? -1;
  let actor: Actor;
  if (proto === 17) {
    actor = new UdpExchange(client, server, 123, port, 48, 48, tConn, rttUs);
  } else {
    const up = Math.max(60, Math.round(w.volume * rng.logNormal(a.up[0], a.up[1])));
    const down = Math.max(60, Math.round(w.volume * rng.logNormal(a.down[0], a.down[1])));
    const speed = rng.logNormal(1, 0.4);
    const upRate = rate * (serverIdx < 0 ? 0.4 : 1) * speed, downRate = rate * speed;
    const rounds = a.rounds[0] + rng.int(a.rounds[1] - a.rounds[0] + 1);
    actor = new TcpSession({
      client, server, sport: ephemeralPort(rng), dport: port, up, down, rounds, rttUs, upRate, downRate, fate: fate(rng),
    }, tConn, rng);
    if (a.label) {
      // listed until a window after the transfer should have finished
      const durUs = (up / upRate + down / downRate) * 1e6 + 4 * rounds * rttUs;
      w.benign.push({ label: a.label, hosts: [client.text, server.text], start: isoUs(tConn), end: isoUs(tConn + durUs + 60e6) });
    }
  }
  mark(actor, clientIdx, serverIdx);
  w.sim.add(actor);
  if (a.service === 'churn') {
    w.benign.push({ label: 'new-outside-service', hosts: [h.ep.text, server.text], start: isoUs(tConn), end: isoUs(tConn + 60e6) });
  }
}

function isoUs(us: number): string {
  return new Date(Math.floor(us / 1000)).toISOString();
}

function mark(a: Actor, hostA: number, hostB: number): void {
  a.hostA = hostA;
  a.hostB = hostB;
}

/** Periodic echo checks (a few ICMP echoes). */
class EchoSpawner extends Actor {
  private readonly gapUs: number;
  constructor(private readonly w: World, private readonly from: HostRt, private readonly to: Endpoint, perHour: number) {
    super();
    this.gapUs = 3.6e9 / perHour;
    this.next = w.sim.startUs + w.rng.int(this.gapUs);
  }
  fire(): boolean {
    const w = this.w;
    const inside = w.index.get(this.to.text) ?? -1;
    const e = new EchoSeries(this.from.ep, this.to, w.rng.int(65536), 4, this.next, inside >= 0 ? 400 : 40_000);
    mark(e, this.from.idx, inside);
    w.sim.add(e);
    this.next += Math.round(this.gapUs * (0.9 + 0.2 * w.rng.float()));
    return true;
  }
}

/** A guest that must be on the Wi-Fi over [startUs, endUs) (the incident's scanning phone). */
export interface Stay { addr: string; startUs: number; endUs: number }

/** Puts every benign background process of every host into the simulation. */
export function addBackground(w: World, stays: readonly Stay[]): void {
  for (const h of w.hosts) {
    if (h.spec.role === 'guest-phone') planPresence(w, h);
    for (const s of stays) if (s.addr === h.spec.addr) h.present = [...(h.present ?? []), s.startUs, s.endUs];
    for (const a of ACTIVITIES[h.spec.role]) w.sim.add(new ActivitySpawner(w, h, a));
    for (const c of ECHO_CHECKS) {
      if (c.from === h.spec.role) w.sim.add(new EchoSpawner(w, h, w.cache.get(c.to, w.index.has(c.to)), c.perHour * w.scale));
    }
    if (h.spec.role === 'imaging') {
      const s = new UdpStream(h.ep, w.cache.get(TELEMETRY.addr), 40000 + (h.idx % 100), TELEMETRY.port, TELEMETRY.payload,
        TELEMETRY.everySec * 1e6, w.sim.startUs + w.rng.int(10e6), w.sim.endUs, 6, w.rng);
      mark(s, h.idx, -1);
      w.sim.add(s);
    }
  }
}
