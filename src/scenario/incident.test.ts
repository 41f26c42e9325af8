import { createHash } from 'node:crypto';
import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { createRequire } from 'node:module';
import { describe, expect, it } from 'vitest';
import { CidrSet } from '../util/addr.js';
import { generateScenario } from './index.js';
import type { Truth } from './truth.js';

const pcapParser = createRequire(import.meta.url)('pcap-parser') as { parse(path: string): { on(ev: string, fn: (x: any) => void): void } };
const dir = mkdtempSync(join(tmpdir(), 'tw-incident-'));
const sha = (p: string) => createHash('sha256').update(readFileSync(p)).digest('hex');
const OPTS = { kind: 'incident', hours: 1, scale: 0.2, volume: 0.05 } as const;

interface Pkt { t: number; src: string; dst: string; proto: number; sport: number; dport: number; flags: number; ipLen: number }

/** Minimal reader for our own output: LE µs pcap, Ethernet, IPv4/IPv6 without extension headers. */
function readPcap(path: string): { snaplen: number; pkts: Pkt[] } {
  const b = readFileSync(path);
  expect(b.readUInt32LE(0)).toBe(0xa1b2c3d4);
  const pkts: Pkt[] = [];
  for (let o = 24; o < b.length;) {
    const t = b.readUInt32LE(o) * 1000 + b.readUInt32LE(o + 4) / 1000;
    const cap = b.readUInt32LE(o + 8);
    const f = o + 16;
    const type = b.readUInt16BE(f + 12);
    const ip = f + 14;
    let l4: number, proto: number, src: string, dst: string, ipLen: number;
    if (type === 0x0800) {
      proto = b[ip + 9]!; ipLen = b.readUInt16BE(ip + 2); l4 = ip + 20;
      src = [...b.subarray(ip + 12, ip + 16)].join('.'); dst = [...b.subarray(ip + 16, ip + 20)].join('.');
    } else {
      proto = b[ip + 6]!; ipLen = b.readUInt16BE(ip + 4) + 40; l4 = ip + 40;
      src = v6(b, ip + 8); dst = v6(b, ip + 24);
    }
    const ports = proto === 6 || proto === 17;
    pkts.push({ t, src, dst, proto, sport: ports ? b.readUInt16BE(l4) : 0, dport: ports ? b.readUInt16BE(l4 + 2) : 0,
      flags: proto === 6 ? b[l4 + 13]! : 0, ipLen });
    o = f + cap;
  }
  return { snaplen: b.readUInt32LE(16), pkts };
}

function v6(b: Buffer, o: number): string {
  const w: string[] = [];
  for (let i = 0; i < 8; i++) w.push(b.readUInt16BE(o + 2 * i).toString(16));
  return w.join(':').replace(/(^|:)0(:0)+(:|$)/, '::');
}

describe('incident scenario', async () => {
  const a = await generateScenario({ ...OPTS, seed: 11, outDir: join(dir, 'a') });
  const { pkts, snaplen } = readPcap(a.dataFile);
  const truth = JSON.parse(readFileSync(a.truthFile, 'utf8')) as Truth;
  const ep = (id: string) => {
    const e = truth.episodes.find((x) => x.id.endsWith(id))!;
    return { ...e, s: Date.parse(e.start), e: Date.parse(e.end) };
  };

  it('is deterministic: same seed, same bytes; another seed, other bytes', async () => {
    const b = await generateScenario({ ...OPTS, seed: 11, outDir: join(dir, 'b') });
    const c = await generateScenario({ ...OPTS, seed: 12, outDir: join(dir, 'c') });
    expect(sha(b.dataFile)).toBe(sha(a.dataFile));
    expect(sha(b.truthFile)).toBe(sha(a.truthFile));
    expect(sha(c.dataFile)).not.toBe(sha(a.dataFile));
  });

  it('keeps the background identical with or without the episodes', async () => {
    const clean = await generateScenario({ ...OPTS, seed: 11, outDir: join(dir, 'clean'), episodes: [] });
    const cleanTruth = JSON.parse(readFileSync(clean.truthFile, 'utf8')) as Truth;
    expect(cleanTruth.episodes).toEqual([]);
    const key = (p: Pkt) => `${p.t} ${p.src} ${p.dst} ${p.proto} ${p.sport} ${p.dport} ${p.flags} ${p.ipLen}`;
    const cleanKeys = readPcap(clean.dataFile).pkts.map(key);
    // every packet of the clean run is in the attacked run; the extra ones are the episodes'
    const all = new Set(pkts.map(key));
    expect(cleanKeys.filter((k) => !all.has(k))).toEqual([]);
    const cleanSet = new Set(cleanKeys);
    const extra = pkts.filter((p) => !cleanSet.has(key(p)));
    const inSomeEpisode = (p: Pkt) => truth.episodes.some((e) => p.t >= Date.parse(e.start) - 1000 && p.t <= Date.parse(e.end) + 60_000);
    expect(extra.length).toBe(pkts.length - cleanKeys.length);
    expect(extra.every(inSomeEpisode)).toBe(true);
  });

  it('is read the same by pcap-parser (reference library): count, lengths and times', async () => {
    const seen: { t: number; cap: number; orig: number }[] = [];
    await new Promise<void>((resolve, reject) => {
      const p = pcapParser.parse(a.dataFile);
      p.on('packet', (x) => seen.push({ t: x.header.timestampSeconds * 1000 + x.header.timestampMicroseconds / 1000,
        cap: x.header.capturedLength, orig: x.header.originalLength }));
      p.on('end', () => resolve());
      p.on('error', reject);
    });
    expect(seen.length).toBe(pkts.length);
    for (let i = 0; i < seen.length; i += 97) {
      expect(seen[i]!.t).toBe(pkts[i]!.t);
      // Ethernet frame on the wire = 14 + IP length; the capture keeps at most the snaplen
      expect(seen[i]!.orig).toBe(14 + pkts[i]!.ipLen);
      expect(seen[i]!.cap).toBe(Math.min(96, seen[i]!.orig));
    }
  });

  it('writes time-ordered packets inside the truth span, snaplen 96, only scenario addresses', () => {
    expect(snaplen).toBe(96);
    expect(pkts.length).toBeGreaterThan(5000);
    const s = Date.parse(truth.start), e = Date.parse(truth.end);
    const allowed = new CidrSet([...truth.inside, '198.51.100.0/24', '203.0.113.0/24', '192.0.2.0/24']);
    let last = 0;
    for (const p of pkts) {
      expect(p.t).toBeGreaterThanOrEqual(last);
      last = p.t;
      if (!allowed.has(p.src) || !allowed.has(p.dst)) throw new Error(`address outside the scenario: ${p.src} ${p.dst}`);
    }
    expect(pkts[0]!.t).toBeGreaterThanOrEqual(s);
    expect(last).toBeLessThan(e);
    expect(pkts.some((p) => p.src.includes(':'))).toBe(true);
  });

  it('lists as hosts exactly the inside addresses that sent packets', () => {
    const inside = new CidrSet(truth.inside);
    const senders = new Set(pkts.filter((p) => inside.has(p.src)).map((p) => p.src));
    expect(new Set(truth.hosts)).toEqual(senders);
    expect(truth.benign_host_hours).toBeGreaterThan(0.5 * truth.hosts.length);
    expect(truth.benign_host_hours).toBeLessThanOrEqual(truth.hosts.length * 1);
  });

  it('has a clean warm-up of at least 15 windows before the first episode', () => {
    const first = Math.min(...truth.episodes.map((e) => Date.parse(e.start)));
    expect(first - Date.parse(truth.start)).toBeGreaterThanOrEqual(15 * 60_000);
    const fsSyns = pkts.filter((p) => p.t < first && p.src === '192.168.60.23' && p.flags === 0x02);
    expect(fsSyns.every((p) => p.dport === 443)).toBe(true);
  });

  it('vertical scan: ~1000 ports of the file server probed inside the episode, mostly RST-ACK answers', () => {
    const v = ep('vertical-scan');
    const probes = pkts.filter((p) => p.src === v.attackers[0] && p.dst === v.victims[0] && p.flags === 0x02);
    expect(new Set(probes.map((p) => p.dport)).size).toBe(1000);
    expect(probes.every((p) => p.t >= v.s && p.t <= v.e)).toBe(true);
    // RFC 9293 3.10.7.1: a closed port answers a SYN with RST-ACK (0x14)
    const rsts = pkts.filter((p) => p.src === v.victims[0] && p.dst === v.attackers[0] && p.flags === 0x14);
    expect(rsts.length).toBeGreaterThanOrEqual(990);
  });

  it('horizontal scan: port 445 on 508 addresses of two clinic /24s, mostly unanswered', () => {
    const h = ep('horizontal-scan');
    const probes = pkts.filter((p) => p.src === h.attackers[0] && p.dport === 445 && p.flags === 0x02 && p.t >= h.s && p.t <= h.e);
    const targets = new Set(probes.map((p) => p.dst));
    expect(targets.size).toBe(508);
    const answered = new Set(pkts.filter((p) => p.dst === h.attackers[0] && p.sport === 445 && p.t >= h.s).map((p) => p.src));
    expect(answered.size).toBeLessThan(targets.size / 10);
  });

  it('SYN flood: SYNs only, from exactly the listed spoofed sources, to the records database port 443', () => {
    const f = ep('syn-flood');
    const syns = pkts.filter((p) => p.dst === f.victims[0] && p.dport === 443 && !inside(p.src));
    expect(syns.every((p) => p.flags === 0x02 && p.t >= f.s && p.t <= f.e)).toBe(true);
    expect(new Set(syns.map((p) => p.src))).toEqual(new Set(f.attackers));
    expect(f.attackers.length).toBeGreaterThan(200);
    expect(pkts.some((p) => p.src === f.victims[0] && f.attackers.includes(p.dst))).toBe(false);
  });

  it('UDP surge: the imaging station sends tens of times its normal bytes a minute', () => {
    const u = ep('udp-surge');
    const host = u.attackers[0]!;
    const start = Date.parse(truth.start);
    const first = Math.min(...truth.episodes.map((e) => Date.parse(e.start)));
    const bytesOut = (s: number, e: number) => pkts.filter((p) => p.src === host && p.t >= s && p.t < e).reduce((n, p) => n + p.ipLen, 0);
    const normal = bytesOut(start, first) / ((first - start) / 60_000);
    const surge = bytesOut(u.s, u.e) / ((u.e - u.s) / 60_000);
    expect(surge / normal).toBeGreaterThan(20);
  });

  it('upload: an exam PC sends over 10 MB to an outside address nobody contacted before', () => {
    const up = ep('upload');
    const peer = up.victims[0]!;
    expect(pkts.some((p) => (p.dst === peer || p.src === peer) && p.t < up.s)).toBe(false);
    const sent = pkts.filter((p) => p.src === up.attackers[0] && p.dst === peer).reduce((n, p) => n + p.ipLen, 0);
    expect(sent).toBeGreaterThan(10e6);
  });

  it('benign TCP handshakes fail at about the benign rate (~1 %)', () => {
    const attackers = new Set(truth.episodes.flatMap((e) => e.attackers));
    const syns = pkts.filter((p) => p.flags === 0x02 && inside(p.src) && !attackers.has(p.src));
    const synAcks = pkts.filter((p) => p.flags === 0x12 && inside(p.dst) && !attackers.has(p.dst));
    expect(syns.length).toBeGreaterThan(100);
    expect(synAcks.length / syns.length).toBeGreaterThan(0.95);
  });
});

const INSIDE = new CidrSet(['10.60.0.0/16', '192.168.60.0/24', '2001:db8:60::/48']);
function inside(a: string): boolean {
  return INSIDE.has(a);
}
