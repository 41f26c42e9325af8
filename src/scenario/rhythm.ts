import { basename } from 'node:path';
import type { FlowRecord, Outcome } from '../flow/record.js';
import { writeFlowLog } from './flowlog.js';
import {
  ACTIVITIES, BACKUP, BACKUP_SERVER, DAY, DNS_MISS_RATE, ECHO_CHECKS, FILE_SERVER, HOSTS, HOUR, INSIDE_CIDRS, MINUTE,
  RECORDS_DB, RESOLVER, SCENARIO_NAME, SERVICES, TELEMETRY, UPSTREAM_DNS, churnPeer, clinicActivity, hourNoise,
  type ActivitySpec, type HostSpec,
} from './larkspur.js';
import { Prng } from './prng.js';
import { writeTruth, type Truth, type TruthBenign, type TruthEpisode } from './truth.js';

/** A Wednesday 00:00 UTC: eight days run Wednesday to the next Wednesday, a weekend in the middle. */
export const RHYTHM_START = Date.UTC(2026, 2, 4, 0, 0, 0);
const WINDOW = MINUTE;
const NOISE_CAP = 2.5;

export interface RhythmOptions {
  seed: number;
  dataFile: string;
  truthFile: string;
  /** Span in hours (default 192 = 8 days); the daytime backup episode is on the last day when it fits. */
  hours?: number;
  scale?: number;
}

export interface RhythmResult {
  records: number;
  truth: Truth;
}

/** One flow to be cut into per-window records. */
interface FlowPlan {
  start: number; end: number; proto: number; src: string; dst: string; sport: number; dport: number;
  pkts: number; bytes: number; rpkts: number; rbytes: number; outcome: Outcome; tcp: boolean; benign: boolean;
}

/** Generates the rhythm flow log (one record per flow per 60 s window) and its truth. */
export function generateRhythm(o: RhythmOptions): RhythmResult {
  const hours = o.hours ?? 192;
  const scale = o.scale ?? 1;
  const start = RHYTHM_START, end = start + Math.round(hours * HOUR);
  const rng = new Prng(o.seed);
  const exporter = basename(o.dataFile);
  const records: FlowRecord[] = [];
  const hostIndex = new Map<string, number>();
  const addrs: string[] = [];
  for (const h of HOSTS) for (const a of [h.addr, h.addr6]) if (a) { hostIndex.set(a, addrs.length); addrs.push(a); }
  const hourCount = Math.ceil(hours);
  const benignCells = new Uint8Array(addrs.length * hourCount);
  const active = new Uint8Array(addrs.length);
  const benign: TruthBenign[] = [];
  const episodes: TruthEpisode[] = [];
  let churn = 0;

  const touch = (addr: string, t: number, isBenign: boolean) => {
    const i = hostIndex.get(addr);
    if (i === undefined) return;
    active[i] = 1;
    if (isBenign) benignCells[i * hourCount + Math.min(hourCount - 1, Math.floor((t - start) / HOUR))] = 1;
  };

  /** Cuts a flow at window boundaries, sharing counts by time (at least one packet per side shown). */
  const emit = (f: FlowPlan) => {
    const fEnd = Math.min(f.end, end - 0.001);
    if (f.start >= end) return;
    touch(f.src, f.start, f.benign);
    touch(f.dst, f.start, f.benign);
    const dur = Math.max(fEnd - f.start, 0.001);
    let left = { pkts: f.pkts, bytes: f.bytes, rpkts: f.rpkts, rbytes: f.rbytes };
    for (let w0 = Math.floor(f.start / WINDOW) * WINDOW; w0 <= fEnd; w0 += WINDOW) {
      const s = Math.max(f.start, w0), e = Math.min(fEnd, w0 + WINDOW - 0.001);
      const last = w0 + WINDOW > fEnd;
      const share = last ? 1 : (e - s) / dur;
      const take = (total: number, rest: number) => (last ? rest : Math.min(rest, Math.round(total * share)));
      const r: FlowRecord = {
        start: micro(s), end: micro(e), proto: f.proto, src: f.src, dst: f.dst, sport: f.sport, dport: f.dport,
        pkts: take(f.pkts, left.pkts), bytes: take(f.bytes, left.bytes), rpkts: take(f.rpkts, left.rpkts), rbytes: take(f.rbytes, left.rbytes),
        flags: 0, rflags: 0, outcome: f.outcome, exporter,
      };
      left = { pkts: left.pkts - r.pkts, bytes: left.bytes - r.bytes, rpkts: left.rpkts - r.rpkts, rbytes: left.rbytes - r.rbytes };
      if (f.tcp) setFlags(r, s === f.start, last, f.outcome);
      if (f.benign) { touch(f.src, s, true); touch(f.dst, s, true); } // long flows count in every hour they span
      records.push(r);
    }
  };

  const tcpFlow = (t: number, src: string, dst: string, dport: number, up: number, down: number, durMs: number, v6: boolean, isBenign = true) => {
    const u = rng.float();
    const outcome: Outcome = u < 0.005 ? 'rejected' : u < 0.01 ? 'unanswered' : 'established';
    const sport = 49152 + rng.int(16384);
    const hdr = v6 ? 60 : 40;
    if (outcome === 'rejected') {
      emit({ start: t, end: t + 1, proto: 6, src, dst, sport, dport, pkts: 1, bytes: hdr, rpkts: 1, rbytes: hdr, outcome, tcp: true, benign: isBenign });
      return;
    }
    if (outcome === 'unanswered') {
      emit({ start: t, end: t + 3000, proto: 6, src, dst, sport, dport, pkts: 3, bytes: 3 * hdr, rpkts: 0, rbytes: 0, outcome, tcp: true, benign: isBenign });
      return;
    }
    const mss = v6 ? 1440 : 1460;
    const upSegs = Math.ceil(up / mss), downSegs = Math.ceil(down / mss);
    const pkts = 4 + upSegs + Math.ceil(downSegs / 2), rpkts = 2 + downSegs + Math.ceil(upSegs / 2);
    emit({ start: t, end: t + durMs, proto: 6, src, dst, sport, dport, pkts, bytes: up + hdr * pkts, rpkts, rbytes: down + hdr * rpkts,
      outcome, tcp: true, benign: isBenign });
  };

  const activity = (h: HostSpec, a: ActivitySpec, t: number) => {
    const svc = a.service === 'churn' ? null : SERVICES[a.service === 'smb' && h.addr6 ? 'smb6' : a.service];
    const src = svc === SERVICES.smb6 ? h.addr6! : h.addr;
    const dst = svc ? svc.addr : churnPeer(churn++);
    if (a.dns && rng.chance(0.6)) {
      const q = 28 + rng.int(30), an = q + 16 + rng.int(180);
      emit({ start: t, end: t + 1, proto: 17, src: h.addr, dst: RESOLVER, sport: 49152 + rng.int(16384), dport: 53,
        pkts: 1, bytes: 28 + q, rpkts: 1, rbytes: 28 + an, outcome: 'established', tcp: false, benign: true });
      if (rng.chance(DNS_MISS_RATE)) {
        emit({ start: t + 0.2, end: t + 30, proto: 17, src: RESOLVER, dst: rng.pick(UPSTREAM_DNS), sport: 1024 + rng.int(64000), dport: 53,
          pkts: 1, bytes: 39 + q, rpkts: 1, rbytes: 39 + an, outcome: 'established', tcp: false, benign: true });
      }
      t += 40;
    }
    if (svc && svc.proto === 17) {
      emit({ start: t, end: t + svc.rttMs, proto: 17, src, dst, sport: 123, dport: svc.port, pkts: 1, bytes: 76, rpkts: 1, rbytes: 76,
        outcome: 'established', tcp: false, benign: true });
      return;
    }
    const up = Math.max(60, Math.round(rng.logNormal(a.up[0], a.up[1])));
    const down = Math.max(60, Math.round(rng.logNormal(a.down[0], a.down[1])));
    const rate = (svc?.rate ?? 2e6) * rng.logNormal(1, 0.4);
    const rtt = svc?.rttMs ?? 40;
    const rounds = a.rounds[0] + rng.int(a.rounds[1] - a.rounds[0] + 1);
    const durMs = 3 * rtt + ((up + down) / rate) * 1000 + (rounds - 1) * 150;
    tcpFlow(t, src, dst, svc?.port ?? 443, up, down, durMs, src.includes(':'));
    if (!svc) benign.push({ label: 'new-outside-service', hosts: [h.addr, dst], start: iso(t), end: iso(t + 60_000) });
    if (a.label) benign.push({ label: a.label, hosts: [src, dst], start: iso(t), end: iso(t + durMs + 60_000) });
  };

  // background: every role activity as a thinned Poisson process
  HOSTS.forEach((h, hi) => {
    const present = h.role === 'guest-phone' ? presence(rng, start, end) : null;
    for (const a of ACTIVITIES[h.role]) {
      const gap = HOUR / (a.perHour * scale * NOISE_CAP);
      for (let t = start + rng.exp(gap); t < end; t += rng.exp(gap)) {
        const f = (a.clinic ? clinicActivity(t) : 1) * hourNoise(o.seed, hi, Math.floor(t / HOUR));
        if (rng.float() >= f / NOISE_CAP || (present && !inside(present, t))) continue;
        activity(h, a, t);
      }
    }
    for (const c of ECHO_CHECKS) {
      if (c.from !== h.role) continue;
      const gap = HOUR / (c.perHour * scale);
      for (let t = start + rng.float() * gap; t < end; t += gap * (0.9 + 0.2 * rng.float())) {
        emit({ start: t, end: t + 3000, proto: 1, src: h.addr, dst: c.to, sport: 0, dport: 8 * 256, pkts: 4, bytes: 336, rpkts: 4, rbytes: 336,
          outcome: 'n/a', tcp: false, benign: true });
      }
    }
    if (h.role === 'imaging') {
      const sport = 40000 + hi;
      for (let w0 = start; w0 < end; w0 += WINDOW) {
        emit({ start: w0 + rng.float() * 9000, end: w0 + 51_000 + rng.float() * 8000, proto: 17, src: h.addr, dst: TELEMETRY.addr,
          sport, dport: TELEMETRY.port, pkts: 6, bytes: 6 * (TELEMETRY.payload + 28), rpkts: 1, rbytes: 60, outcome: 'established', tcp: false, benign: true });
      }
    }
  });

  // nightly backups, and on the last day the same burst at 14:00
  const backup = (dayStart: number, hourUtc: number, isBenign: boolean): { s: number; e: number } => {
    // a scheduled job starts at its hour, a few minutes late at most (never early)
    const jitter = rng.float() * BACKUP.jitterMin * MINUTE;
    const s = dayStart + hourUtc * HOUR + jitter;
    const minutes = BACKUP.minutes[0] + rng.float() * (BACKUP.minutes[1] - BACKUP.minutes[0]);
    let e = s;
    for (const [src, bytes] of [[FILE_SERVER, BACKUP.bytes[FILE_SERVER]!], [RECORDS_DB, BACKUP.bytes[RECORDS_DB]!]] as const) {
      const vol = Math.round(bytes * (1 + BACKUP.volumeSpread * (2 * rng.float() - 1)));
      const t0 = s + (src === RECORDS_DB ? 60_000 + rng.float() * 120_000 : 0);
      const dur = minutes * MINUTE * (src === RECORDS_DB ? 0.7 : 1);
      tcpFlowFixed(t0, src, BACKUP_SERVER, vol, dur, isBenign);
      e = Math.max(e, t0 + dur);
    }
    return { s, e };
  };
  const tcpFlowFixed = (t: number, src: string, dst: string, up: number, durMs: number, isBenign: boolean) => {
    const upSegs = Math.ceil(up / 1460);
    const pkts = 4 + upSegs, rpkts = 2 + Math.ceil(upSegs / 2);
    emit({ start: t, end: t + durMs, proto: 6, src, dst, sport: 49152 + rng.int(16384), dport: BACKUP.port, pkts, bytes: up + 40 * pkts,
      rpkts, rbytes: 2000 + 40 * rpkts, outcome: 'established', tcp: true, benign: isBenign });
  };
  const backupHosts = [FILE_SERVER, RECORDS_DB, BACKUP_SERVER];
  const days = Math.ceil(hours / 24);
  for (let d = 0; d < days; d++) {
    const { s, e } = backup(start + d * DAY, BACKUP.hourUtc, true);
    if (s < end) benign.push({ label: 'nightly-backup', hosts: backupHosts, start: iso(s), end: iso(Math.min(e, end)) });
  }
  if (days >= 2 && start + (days - 1) * DAY + 15 * HOUR <= end) {
    const { s, e } = backup(start + (days - 1) * DAY, 14, false);
    episodes.push({ id: 'E1-daytime-backup', family: 'flood', kind: 'volume-surge', attackers: [FILE_SERVER, RECORDS_DB],
      victims: [BACKUP_SERVER], start: iso(s), end: iso(e) });
  }

  records.sort((a, b) => a.start - b.start || a.end - b.end);
  const n = writeFlowLog(o.dataFile, records);
  let hostHours = 0;
  for (const v of benignCells) hostHours += v;
  const truth: Truth = {
    scenario: SCENARIO_NAME, kind: 'rhythm', seed: o.seed, start: iso(start), end: iso(end), window_s: 60, inside: INSIDE_CIDRS,
    hosts: addrs.filter((_, i) => active[i] !== 0), benign_host_hours: hostHours, episodes,
    benign: benign.sort((a, b) => a.start.localeCompare(b.start)),
  };
  writeTruth(o.truthFile, truth);
  return { records: n, truth };
}

/** TCP flags OR'd over the part of a flow in one window: SYN in the first, FIN in the last. */
function setFlags(r: FlowRecord, first: boolean, last: boolean, outcome: Outcome): void {
  if (outcome === 'rejected') { r.flags = 0x02; r.rflags = 0x14; return; }
  if (outcome === 'unanswered') { r.flags = 0x02; r.rflags = 0; return; }
  const base = 0x18 | (first ? 0x02 : 0) | (last ? 0x01 : 0); // ACK|PSH, plus SYN / FIN
  r.flags = base;
  r.rflags = base;
}

function presence(rng: Prng, start: number, end: number): number[] {
  const iv: number[] = [];
  for (let t = start + rng.exp(40 * MINUTE); t < end;) {
    const stay = rng.exp(50 * MINUTE) + 5 * MINUTE;
    iv.push(t, t + stay);
    t += stay + rng.exp(80 * MINUTE);
  }
  return iv;
}

function inside(iv: number[], t: number): boolean {
  for (let i = 0; i < iv.length; i += 2) if (t >= iv[i]! && t < iv[i + 1]!) return true;
  return false;
}

/** Milliseconds kept to microsecond precision: shorter lines, same meaning. */
function micro(ms: number): number {
  return Math.round(ms * 1000) / 1000;
}

function iso(ms: number): string {
  return new Date(Math.floor(ms)).toISOString();
}
