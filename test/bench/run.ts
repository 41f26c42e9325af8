/**
 * `npm run bench`: generates the benchmark capture once, then runs each bench in `benches` in its own
 * child process and prints one table, with each row's targets (the issues') met or missed in its last
 * column: capture path >= 3.5 M packets/s, >= 5x the pcap-parser packet loop, peak RSS <= 300 MB;
 * replay >= 2 M/s, >= 3x, <= 600 MB; 1 M hosts <= 1.5 GB; IPFIX decode >= 2 M/s, <= 300 MB; watch >= 200 k/s.
 * Options: --packets N (default 3 M), --repeat N (run each bench N times, report the fastest; default 1),
 * --long-packets N (the long capture's packets, default 12 M; 0 leaves its rows out), --keep (leave the
 * captures in the temp folder).
 */
import { spawnSync } from 'node:child_process';
import { closeSync, existsSync, mkdtempSync, openSync, rmSync, statfsSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { DEFAULT_GEN, generateCapture } from './gen-capture.js';
import { benchIpfixLoad } from './ipfix-load.js';

const args = process.argv.slice(2);
const packetsArg = args.indexOf('--packets');
const packets = packetsArg >= 0 ? Number(args[packetsArg + 1]) : DEFAULT_GEN.packets;
const repeatArg = args.indexOf('--repeat');
const repeat = repeatArg >= 0 ? Math.max(1, Number(args[repeatArg + 1])) : 1;
const longArg = args.indexOf('--long-packets');
const longPackets = longArg >= 0 ? Math.max(0, Number(args[longArg + 1])) : 4 * DEFAULT_GEN.packets;

/** One bench's figures: `packets` counts the units it handled (packets, or records for flow exports). */
export interface Measure { packets: number; ms: number; cpuMs: number; maxRssKB: number; flows?: number }
/**
 * A bench: `input: 'capture'` runs on the generated capture (and is compared with pcap-parser on it),
 * `'long'` on the long capture (the same generator, four times the packets: a replay's fixed costs,
 * V8 compiling the hot code above all, spread over more packets; compared with pcap-parser on it);
 * `'own'` benches make their own input and ignore the file argument.
 */
export interface Bench { name: string; input: 'capture' | 'long' | 'own'; run(file: string): Measure | Promise<Measure>; target?: Target }

/** A row's targets (the issues'): units per wall second, times pcap-parser's rate, peak RSS in MB. */
export interface Target { perSecond?: number; vsPcapParser?: number; maxRssMB?: number }

/** "met", or what was missed, for the table's last column. */
function verdict(t: Target | undefined, pps: number, ratio: number | undefined, rssMB: number): string {
  if (!t) return '-';
  const missed: string[] = [];
  if (t.perSecond !== undefined && pps < t.perSecond) missed.push(`< ${t.perSecond / 1e6} M/s`);
  if (t.vsPcapParser !== undefined && ratio !== undefined && ratio < t.vsPcapParser) missed.push(`< ${t.vsPcapParser}x`);
  if (t.maxRssMB !== undefined && rssMB > t.maxRssMB) missed.push(`> ${t.maxRssMB} MB`);
  return missed.length === 0 ? 'met' : `missed ${missed.join(', ')}`;
}

const CHILD = fileURLToPath(new URL('./bench-child.js', import.meta.url));
const CLI = fileURLToPath(new URL('../../src/cli/main.js', import.meta.url));
const TIME = '/usr/bin/time';

function child(mode: string, file: string): Measure {
  const r = spawnSync(process.execPath, [CHILD, mode, file], { encoding: 'utf8', maxBuffer: 1 << 20 });
  if (r.status !== 0) throw new Error(`bench ${mode} failed (${r.status}): ${r.stderr.trim().split('\n').slice(-3).join(' | ')}`);
  return JSON.parse(r.stdout.trim()) as Measure;
}

/**
 * The compiled CLI, stdout to /dev/null, timed by GNU time: whole process (startup included), real
 * writes. Packet count from the capture generator; flow records not reported (--quiet).
 */
function cli(file: string, packets: number): Measure {
  const devnull = openSync('/dev/null', 'w');
  try {
    const r = spawnSync(TIME, ['-f', 'tidewatch-time %e %U %S %M', process.execPath, CLI, 'flows', '--quiet', file], { stdio: ['ignore', devnull, 'pipe'], encoding: 'utf8' });
    const m = /tidewatch-time ([\d.]+) ([\d.]+) ([\d.]+) (\d+)/.exec(r.stderr);
    if (r.status !== 0 || !m) throw new Error(`tidewatch flows failed (${r.status}): ${r.stderr.trim().split('\n').slice(-3).join(' | ')}`);
    return { packets, ms: Number(m[1]) * 1000, cpuMs: (Number(m[2]) + Number(m[3])) * 1000, maxRssKB: Number(m[4]) };
  } finally {
    closeSync(devnull);
  }
}

/** test/bench/ipfix.ts in its own process (it writes and decodes its own file): records/s and peak RSS. */
function ipfixChild(): Measure {
  const script = fileURLToPath(new URL('./ipfix.js', import.meta.url));
  const r = spawnSync(process.execPath, [script], { encoding: 'utf8', maxBuffer: 1 << 20 });
  if (r.status !== 0) throw new Error(`bench ipfix failed (${r.status}): ${r.stderr.trim().split('\n').slice(-3).join(' | ')}`);
  const m = JSON.parse(r.stdout.trim().split('\n').pop()!) as { rate: number; rssMB: number; notes: string };
  process.stdout.write(`ipfix-decode: ${m.notes}\n`);
  return { packets: m.rate, ms: 1000, cpuMs: 1000, maxRssKB: m.rssMB * 1024 };
}

/** The benches, in table order; `baseline` names the row the others are compared with. */
export const benches: Bench[] = [
  { name: 'capture -> flows (decode, flow table, JSON lines)', input: 'capture', run: (f) => child('flows', f), target: { perSecond: 3.5e6, vsPcapParser: 5, maxRssMB: 300 } },
  ...(existsSync(TIME) ? [{ name: 'tidewatch flows CLI > /dev/null (whole process)', input: 'capture' as const, run: (f: string) => cli(f, packets) }] : []),
  { name: 'pcap-parser packet loop (npm, count only)', input: 'capture', run: (f) => child('pcap-parser', f) },
  { name: 'plain loop: framing, IP, ports, bidirectional counts (plain-loop.ts, no output)', input: 'capture', run: (f) => child('plain-loop', f) },
  { name: 'replay: capture -> alerts (reading thread + detectors, as replay runs)', input: 'capture', run: (f) => child('replay', f), target: { perSecond: 2e6, vsPcapParser: 3, maxRssMB: 600 } },
  // replay's two threads apart: what each does alone, on a core of its own
  { name: '  its reading thread alone: capture -> flow records, counted', input: 'capture', run: (f) => child('records', f) },
  { name: '  its main thread alone: records held in memory -> windows, detectors', input: 'capture', run: (f) => child('windows', f) },
  { name: 'replay --no-read-thread (one thread)', input: 'capture', run: (f) => child('replay-main', f) },
  { name: 'long capture: pcap-parser packet loop', input: 'long', run: (f) => child('pcap-parser', f) },
  { name: 'long capture: replay (reading thread + detectors)', input: 'long', run: (f) => child('replay', f) },
  { name: 'replay host scaling: 1 M distinct hosts x 3 windows (records)', input: 'own', run: () => child('hosts', '1000000'), target: { maxRssMB: 1500 } },
  { name: 'IPFIX file decode, 2.1 M records (records)', input: 'own', run: () => ipfixChild(), target: { perSecond: 2e6, maxRssMB: 300 } },
  // one second at the highest loss-free rate; CPU = the receiving watch process's
  { name: 'watch: IPFIX over loopback UDP, highest loss-free rate (records)', input: 'own', run: async () => {
    const r = await benchIpfixLoad();
    process.stdout.write(`${r.name}: ${r.notes}\n`);
    return { packets: r.rate, ms: 1000, cpuMs: r.receiverCpuMsPerS, maxRssKB: r.rssMB * 1024 };
  }, target: { perSecond: 2e5 } },
];
const BASELINE = 'pcap-parser packet loop (npm, count only)';
const LONG_BASELINE = 'long capture: pcap-parser packet loop';

/** Disk the long capture needs (octets per packet as the generator writes them, with room to spare). */
function longFits(dir: string, packets: number, bytesPerPacket: number): boolean {
  try {
    const fs = statfsSync(dir);
    return fs.bavail * fs.bsize > packets * bytesPerPacket * 1.5;
  } catch {
    return false;
  }
}

const dir = mkdtempSync(join(tmpdir(), 'tidewatch-bench-'));
const file = join(dir, 'bench.pcap');
try {
  const t = Date.now();
  const gen = generateCapture(file, { ...DEFAULT_GEN, packets });
  const size = statSync(file).size;
  process.stdout.write(`capture: ${gen.packets} packets, ${gen.flows} generated flows, ${(size / 1e6).toFixed(1)} MB, written in ${((Date.now() - t) / 1000).toFixed(1)} s (${file})\n\n`);
  const longFile = join(dir, 'bench-long.pcap');
  let long = longPackets > 0;
  if (long && !longFits(dir, longPackets, size / gen.packets)) {
    process.stdout.write(`long capture: left out (not enough free space in ${dir} for ${longPackets} packets)\n\n`);
    long = false;
  }
  if (long) {
    const t2 = Date.now();
    const g = generateCapture(longFile, { ...DEFAULT_GEN, packets: longPackets });
    process.stdout.write(`long capture: ${g.packets} packets, ${g.flows} generated flows, ${(statSync(longFile).size / 1e6).toFixed(1)} MB, written in ${((Date.now() - t2) / 1000).toFixed(1)} s\n\n`);
  }
  const rows: [string, Measure][] = [];
  const inputOf = new Map<string, Bench['input']>();
  const targetOf = new Map<string, Target | undefined>();
  for (const b of benches) {
    if (b.input === 'long' && !long) continue;
    const f = b.input === 'long' ? longFile : file;
    inputOf.set(b.name, b.input);
    targetOf.set(b.name, b.target);
    let best = await b.run(f);
    for (let i = 1; i < repeat; i++) {
      const m = await b.run(f);
      if (m.ms < best.ms) best = m;
    }
    rows.push([b.name, best]);
  }
  if (long) rmSync(longFile, { force: true });
  const baseOf = (name: string): Measure | undefined => {
    const input = inputOf.get(name);
    const n = input === 'capture' ? BASELINE : input === 'long' ? LONG_BASELINE : null;
    return n === null ? undefined : rows.find(([x]) => x === n)?.[1];
  };
  const pps = (m: Measure) => m.packets / (m.ms / 1000);
  const cpuPps = (m: Measure) => m.packets / (m.cpuMs / 1000);
  const head = ['bench', 'packets', 'seconds', 'M packets/s', 'MB/s', 'M packets/CPU s', 'flow records', 'peak RSS MB', 'vs pcap-parser', 'CPU vs pcap-parser', 'targets'];
  const table = rows.map(([name, m]) => {
    const base = baseOf(name);
    const input = inputOf.get(name);
    return [
      name, String(m.packets), (m.ms / 1000).toFixed(2), (pps(m) / 1e6).toFixed(2),
      input === 'capture' ? (size / 1e6 / (m.ms / 1000)).toFixed(0) : input === 'long' ? ((size / gen.packets) * m.packets / 1e6 / (m.ms / 1000)).toFixed(0) : '-',
      (cpuPps(m) / 1e6).toFixed(2), m.flows === undefined ? '-' : String(m.flows), (m.maxRssKB / 1024).toFixed(0),
      base ? `${(pps(m) / pps(base)).toFixed(1)}x` : '-',
      base ? `${(cpuPps(m) / cpuPps(base)).toFixed(1)}x` : '-',
      verdict(targetOf.get(name), pps(m), base ? pps(m) / pps(base) : undefined, m.maxRssKB / 1024),
    ];
  });
  const widths = head.map((h, i) => Math.max(h.length, ...table.map((r) => r[i]!.length)));
  const line = (r: string[]) => r.map((c, i) => (i === 0 ? c.padEnd(widths[i]!) : c.padStart(widths[i]!))).join('  ');
  process.stdout.write(`${line(head)}\n${widths.map((w) => '-'.repeat(w)).join('  ')}\n${table.map(line).join('\n')}\n`);
  process.stdout.write('\ntargets: capture path >= 3.5 M packets/s, >= 5x pcap-parser, peak RSS <= 300 MB;\n'
    + '         replay >= 2 M packets/s, >= 3x pcap-parser, peak RSS <= 600 MB; 1 M hosts peak RSS <= 1.5 GB;\n'
    + '         IPFIX decode >= 2 M records/s, peak RSS <= 300 MB; watch over loopback UDP >= 200 k records/s\n');
  process.stdout.write('seconds = wall time (in the child, startup excluded, except for the whole-process CLI row); CPU s = user + system time of the child;\n'
    + 'vs pcap-parser compares packets per wall second, CPU vs pcap-parser packets per CPU second (both children read the same file);\n'
    + 'the plain loop is the least work that counts bidirectional flows (DESIGN.md section 9: about 5.4 M packets/s), a ceiling for the capture rows;\n'
    + "replay's two threads share the machine's cores with each other and with V8's compiler and collector threads: replay runs at best at the rate of the slower of its two rows alone;\n"
    + 'the long capture rows (same generator, more packets) compare with pcap-parser on the long capture: fixed costs of a run (V8 compiling the hot code) weigh less there;\n'
    + `the machine is shared, so compare rows of one run rather than runs${repeat > 1 ? ` (fastest of ${repeat} runs each)` : ''}.\n`);
} finally {
  if (!args.includes('--keep')) rmSync(dir, { recursive: true, force: true });
}
