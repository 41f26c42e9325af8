/**
 * Load bench of the live path (issue 6): `tidewatch watch --ipfix-listen 127.0.0.1:0` in a child
 * process, fed IPFIX over loopback UDP at increasing rates from this process. Each step sends for
 * STEP_MS, waits for the collector to settle, and compares what arrived with what was sent; losses
 * are also seen by the collector through IPFIX sequence numbers (RFC 7011 section 3.1). Reports the
 * highest rate at which every record arrived. Stops by itself (at the first lossy step, when the
 * sender cannot keep up, or after the last step), well under 60 s. Run it with `npm run bench`, or
 * alone after a build: `node dist/test/bench/ipfix-load.js`.
 */
import { spawn } from 'node:child_process';
import { UDP_RECEIVE_BUFFER } from '../../src/flowlog/collector.js';
import { createSocket } from 'node:dgram';
import { existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import type { FlowRecord } from '../../src/flow/record.js';
import type { LiveStatus } from '../../src/live/status.js';
import { encodeIpfix, RECORD_V4_BYTES, START_MS_AT } from '../live/ipfix-encode.js';

const CLI = fileURLToPath(new URL('../../src/cli/main.js', import.meta.url));
/** Records per second of each step, in order. */
const RATES = [25_000, 50_000, 100_000, 150_000, 200_000, 250_000, 300_000, 400_000, 500_000];
const STEP_MS = 4000;
/** After a step: wait until the collector's count holds still (the sensor works off its backlog). */
const SETTLE_MIN_MS = 1000;
const SETTLE_MAX_MS = 5000;
const TOTAL_LIMIT_MS = 58_000;
const POOL = 256;
const INSIDE_HOSTS = 5000;

const sleep = (ms: number) => new Promise<void>((r) => setTimeout(r, ms));

/** Distinct messages to cycle through: 5000 inside hosts to outside peers, TCP and UDP. */
function messagePool(): Buffer[] {
  const recs: FlowRecord[] = [];
  for (let i = 0; recs.length < POOL * 21; i++) {
    const h = i % INSIDE_HOSTS;
    recs.push({
      start: 0, end: 0, proto: i & 1 ? 6 : 17, src: `10.0.${h >> 8}.${h & 255}`, dst: `198.51.100.${(i * 7) & 255}`,
      sport: 1024 + ((i * 13) & 0x7fff), dport: i & 1 ? 443 : 53, pkts: 1 + (i & 15), bytes: 60 + i % 1400,
      rpkts: 1 + (i & 7), rbytes: 60 + (i * 3) % 9000, flags: i & 1 ? 0x1b : 0, rflags: i & 1 ? 0x1b : 0, outcome: 'established', exporter: '',
    });
  }
  return encodeIpfix(recs, { maxBytes: 1400, templateEvery: POOL }).slice(0, POOL);
}

/** Record count of an IPFIX message of the pool (IPv4 data sets only) and where each record starts. */
function layout(m: Buffer): { count: number; starts: number[] } {
  const starts: number[] = [];
  let p = 16;
  while (p < m.length) {
    const id = m.readUInt16BE(p), len = m.readUInt16BE(p + 2);
    if (id >= 256) for (let q = p + 4; q + RECORD_V4_BYTES <= p + len; q += RECORD_V4_BYTES) starts.push(q);
    p += len;
  }
  return { count: starts.length, starts };
}

function cpuMs(pid: number): number {
  // utime and stime, fields 14 and 15 of /proc/PID/stat, in clock ticks (100 per second on Linux)
  const f = readFileSync(`/proc/${pid}/stat`, 'utf8').split(') ')[1]!.split(' ');
  return (Number(f[11]) + Number(f[12])) * 10;
}

/** The kernel's default UDP receive buffer, which the collector's socket gets (Linux). */
function rmemMax(): string {
  try {
    return readFileSync('/proc/sys/net/core/rmem_max', 'utf8').trim();
  } catch {
    return 'unknown';
  }
}

/** The status once the collector's record count has held still for 400 ms (at least SETTLE_MIN_MS, at most SETTLE_MAX_MS). */
async function settle(status: () => LiveStatus | null): Promise<LiveStatus> {
  const start = Date.now();
  let last = -1, stableSince = Date.now();
  for (;;) {
    await sleep(200);
    const s = status()!;
    const n = s.sources.collector!.records;
    if (n !== last) { last = n; stableSince = Date.now(); }
    const waited = Date.now() - start;
    if ((waited >= SETTLE_MIN_MS && Date.now() - stableSince >= 400) || waited >= SETTLE_MAX_MS) return s;
  }
}

interface Step { rate: number; sent: number; received: number; seqLost: number; sentRate: number; cpuShare: number; rssMB: number }

export async function benchIpfixLoad(): Promise<{ name: string; rate: number; unit: string; rssMB: number; notes: string; receiverCpuMsPerS: number }> {
  const dir = mkdtempSync(join(tmpdir(), 'tidewatch-load-'));
  const statusFile = join(dir, 'status.json');
  const child = spawn(process.execPath, [CLI, 'watch', '--ipfix-listen', '127.0.0.1:0', '--status-json', statusFile, '--status-interval', '200ms',
    '--quiet', '--window', '10s', '--internal', '10.0.0.0/8', '--sensor', 'bench'], { stdio: ['ignore', 'ignore', 'pipe'] });
  let stderr = '';
  child.stderr!.setEncoding('utf8').on('data', (s: string) => (stderr += s));
  const status = (): LiveStatus | null => (existsSync(statusFile) ? JSON.parse(readFileSync(statusFile, 'utf8')) as LiveStatus : null);
  const t0 = Date.now();
  try {
    let port = 0;
    while (!port) {
      if (Date.now() - t0 > 10_000) throw new Error(`watch did not start: ${stderr.trim()}`);
      port = Number(status()?.listening.ipfix_udp?.split(':').pop() ?? 0);
      await sleep(50);
    }
    const pool = messagePool();
    const layouts = pool.map(layout);
    const sock = createSocket('udp4');
    let seq = 0, k = 0, totalSent = 0;
    const send = () => {
      const m = Buffer.from(pool[k % POOL]!);
      const { count, starts } = layouts[k % POOL]!;
      const now = Date.now();
      // records carry the wall clock as their times, so windows close on time as on a real link
      for (const s of starts) {
        m.writeUInt32BE(Math.floor(now / 2 ** 32), s + START_MS_AT.v4); m.writeUInt32BE(now >>> 0, s + START_MS_AT.v4 + 4);
        m.writeUInt32BE(Math.floor(now / 2 ** 32), s + START_MS_AT.v4 + 8); m.writeUInt32BE(now >>> 0, s + START_MS_AT.v4 + 12);
      }
      m.writeUInt32BE(Math.floor(now / 1000) >>> 0, 4);
      m.writeUInt32BE(seq >>> 0, 8);
      sock.send(m, port, '127.0.0.1');
      seq += count; k++; totalSent += count;
      return count;
    };
    const steps: Step[] = [];
    for (const rate of RATES) {
      if (Date.now() - t0 + STEP_MS + SETTLE_MAX_MS > TOTAL_LIMIT_MS) break;
      const before = status()!;
      const cpu0 = cpuMs(child.pid!);
      const start = performance.now();
      let sent = 0;
      for (;;) {
        const el = performance.now() - start;
        if (el >= STEP_MS) break;
        // what is due by now, sent in one burst per timer tick (about 1 ms), then the sender sleeps
        // rather than spins: on two cores a spinning sender takes the receiver's CPU
        const due = Math.min(rate * STEP_MS / 1000, rate * el / 1000);
        while (sent < due) sent += send();
        await sleep(1);
      }
      const sendMs = performance.now() - start;
      const after = await settle(status);
      const cpu1 = cpuMs(child.pid!);
      const settleMs = performance.now() - start - sendMs;
      const received = after.sources.collector!.records - before.sources.collector!.records;
      steps.push({
        rate, sent, received, seqLost: after.drops.sequence_lost - before.drops.sequence_lost, sentRate: sent / (sendMs / 1000),
        cpuShare: (cpu1 - cpu0) / (sendMs + settleMs), rssMB: after.memory.rss_mb,
      });
      if (received < sent || sent / (sendMs / 1000) < rate * 0.95) break;
    }
    // one more message, so a loss at the very end shows in the sequence numbers too
    send();
    const last = await settle(status);
    sock.close();
    const unaccounted = totalSent - last.sources.collector!.records - last.drops.sequence_lost;
    const clean = steps.filter((s) => s.received === s.sent && s.sentRate >= s.rate * 0.95);
    const best = clean.length > 0 ? clean[clean.length - 1]! : null;
    const table = steps.map((s) => `${(s.rate / 1000).toFixed(0)}k: sent ${s.sent} (${(s.sentRate / 1000).toFixed(0)}k/s), received ${s.received}, `
      + `lost by sequence ${s.seqLost}, receiver CPU ${(s.cpuShare * 100).toFixed(0)} %`).join('; ');
    return {
      name: 'ipfix-load', rate: best ? best.rate : 0, unit: 'records/s', rssMB: Math.max(...steps.map((s) => s.rssMB)),
      receiverCpuMsPerS: best ? Math.round(best.cpuShare * 1000) : NaN,
      notes: `watch with the IPFIX listener (collector on its own thread) over loopback UDP (receive buffer requested ${UDP_RECEIVE_BUFFER} octets, kernel rmem_max ${rmemMax()}), `
        + `${RECORD_V4_BYTES}-octet biflow records in 1400-octet datagrams, `
        + `${INSIDE_HOSTS} inside hosts, 10 s windows; steps of ${STEP_MS / 1000} s: ${table}; `
        + `all runs: ${totalSent} sent, ${last.sources.collector!.records} received, ${last.drops.sequence_lost} lost by sequence numbers, `
        + `${unaccounted} unaccounted`,
    };
  } finally {
    child.kill('SIGTERM');
    await new Promise((r) => child.once('exit', r));
    rmSync(dir, { recursive: true, force: true });
  }
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) {
  console.log(JSON.stringify(await benchIpfixLoad(), null, 2));
}
