import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { createServer, type AddressInfo, type Server } from 'node:net';
import type { LiveStatus } from '../../src/live/status.js';

export const CLI = new URL('../../dist/src/cli/main.js', import.meta.url).pathname;
export const DEMO_PCAP = new URL('../../captures/larkspur-demo.pcap', import.meta.url).pathname;
export const DEMO_TRUTH = new URL('../../captures/larkspur-demo.truth.json', import.meta.url).pathname;

export interface Watch {
  child: ChildProcess;
  stdout(): string;
  stderr(): string;
  /** Resolves with the exit code. */
  exited: Promise<number | null>;
}

/** Starts the built CLI (`npm test` builds first) with stdout and stderr collected. */
export function startCli(args: string[]): Watch {
  const child = spawn(process.execPath, [CLI, ...args], { stdio: ['pipe', 'pipe', 'pipe'] });
  let out = '', err = '';
  child.stdout!.setEncoding('utf8').on('data', (s: string) => (out += s));
  child.stderr!.setEncoding('utf8').on('data', (s: string) => (err += s));
  child.stdin!.on('error', () => {});
  const exited = new Promise<number | null>((r) => child.on('exit', (code) => r(code)));
  return { child, stdout: () => out, stderr: () => err, exited };
}

export async function waitFor<T>(what: string, probe: () => T | null | undefined | false, timeoutMs = 10_000): Promise<T> {
  const until = Date.now() + timeoutMs;
  for (;;) {
    const v = probe();
    if (v) return v;
    if (Date.now() > until) throw new Error(`timed out waiting for ${what}`);
    await sleep(25);
  }
}

export const sleep = (ms: number) => new Promise<void>((r) => setTimeout(r, ms));

export function readStatus(path: string): LiveStatus | null {
  if (!existsSync(path)) return null;
  return JSON.parse(readFileSync(path, 'utf8')) as LiveStatus;
}

/** A syslog TCP receiver: collects the bytes of every connection. */
export async function syslogReceiver(): Promise<{ port: number; bytes(): Buffer; close(): Promise<void> }> {
  const parts: Buffer[] = [];
  const server: Server = createServer((c) => c.on('data', (b: Buffer) => parts.push(b)));
  await new Promise<void>((r) => server.listen(0, '127.0.0.1', () => r()));
  return {
    port: (server.address() as AddressInfo).port,
    bytes: () => Buffer.concat(parts),
    close: () => new Promise<void>((r) => { server.close(() => r()); }),
  };
}

/** Splits octet-counted frames `MSG-LEN SP SYSLOG-MSG` (RFC 6587 section 3.4.1); throws on a bad frame. */
export function octetCountedFrames(b: Buffer): Buffer[] {
  const out: Buffer[] = [];
  let p = 0;
  while (p < b.length) {
    const sp = b.indexOf(0x20, p);
    const lenText = b.toString('ascii', p, sp);
    if (sp < 0 || !/^[1-9]\d*$/.test(lenText)) throw new Error(`bad frame length at ${p}: ${JSON.stringify(lenText)}`);
    const len = Number(lenText);
    if (sp + 1 + len > b.length) throw new Error(`frame at ${p} runs past the end`);
    out.push(b.subarray(sp + 1, sp + 1 + len));
    p = sp + 1 + len;
  }
  return out;
}

export interface Syslog5424 { pri: number; version: number; timestamp: string; hostname: string; app: string; procid: string; msgid: string; sd: string; msg: string }

/**
 * RFC 5424 section 6: `<PRI>VERSION SP TIMESTAMP SP HOSTNAME SP APP-NAME SP PROCID SP MSGID SP
 * STRUCTURED-DATA [SP MSG]`, MSG as UTF-8 with a BOM (section 6.4). Throws when it does not parse.
 */
export function parse5424(m: Buffer): Syslog5424 {
  const text = m.toString('utf8');
  const h = /^<(\d{1,3})>(\d) (\S+) (\S+) (\S+) (\S+) (\S+) (-|\[(?:[^\]\\]|\\.)*\](?:\[(?:[^\]\\]|\\.)*\])*) \uFEFF([\s\S]*)$/.exec(text);
  if (!h) throw new Error(`not RFC 5424: ${text.slice(0, 120)}`);
  return {
    pri: Number(h[1]), version: Number(h[2]), timestamp: h[3]!, hostname: h[4]!, app: h[5]!, procid: h[6]!, msgid: h[7]!, sd: h[8]!, msg: h[9]!,
  };
}

/** Writes `data` to a stream in chunks with a pause after each, honouring backpressure. */
export async function trickle(w: NodeJS.WritableStream, data: Buffer, chunk: number, pauseMs: number, from = 0, to = data.length): Promise<void> {
  for (let p = from; p < to; p += chunk) {
    const ok = w.write(data.subarray(p, Math.min(to, p + chunk)));
    if (!ok) await new Promise((r) => w.once('drain', r));
    await sleep(pauseMs);
  }
}

/** Start of the flow-log lines below: 2026-03-10T09:00:00Z. */
export const LOG_T0 = Date.UTC(2026, 2, 10, 9, 0, 0);

/** Flow-log line i (JSON Lines): one TCP flow from an inside host, 10 ms after the one before. */
export function flowLogLine(i: number): string {
  return `${JSON.stringify({ start: LOG_T0 + i * 10, end: LOG_T0 + i * 10 + 5, proto: 6, src: '10.60.1.10', dst: '198.51.100.2', sport: 40000 + i, dport: 443, pkts: 3, bytes: 180 })}\n`;
}
