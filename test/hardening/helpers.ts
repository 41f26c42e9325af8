import { execFile } from 'node:child_process';
import { join } from 'node:path';
import type { Alert } from '../../src/alert/alert.js';
import type { FlowRecord } from '../../src/flow/record.js';

export const ROOT = join(import.meta.dirname, '..', '..');
export const CLI = join(ROOT, 'dist', 'src', 'cli', 'main.js');
export const DEMO = join(ROOT, 'captures', 'larkspur-demo.pcap');
/** The demo capture's inside networks (its truth file). */
export const DEMO_INSIDE = '10.60.0.0/16,2001:db8:60::/48';

export interface Run { code: number | null; stdout: string; stderr: string }

/** Runs the built CLI (tests build first: `npm test` does) and collects its output. */
export function cli(args: readonly string[], opts: { env?: NodeJS.ProcessEnv; timeoutMs?: number } = {}): Promise<Run> {
  return new Promise((resolve) => {
    execFile(process.execPath, [CLI, ...args], { env: { ...process.env, ...opts.env }, timeout: opts.timeoutMs ?? 60_000, maxBuffer: 64 << 20 },
      (err, stdout, stderr) => resolve({ code: err ? (typeof err.code === 'number' ? err.code : null) : 0, stdout, stderr }));
  });
}

/** A flow record with documentation addresses (RFC 5737) unless told otherwise. */
export function rec(over: Partial<FlowRecord> = {}): FlowRecord {
  return {
    start: 1_700_000_000_000, end: 1_700_000_000_500, proto: 6, src: '192.0.2.10', dst: '198.51.100.20', sport: 40000, dport: 443,
    pkts: 3, bytes: 300, rpkts: 2, rbytes: 200, flags: 0x1b, rflags: 0x1b, outcome: 'established', exporter: 'test', ...over,
  };
}

/** The i-th address of 10.0.0.0/8 (private, RFC 1918). */
export function addr10(i: number): string {
  return `10.${(i >>> 16) & 255}.${(i >>> 8) & 255}.${i & 255}`;
}

/** A whole alert line as the feed carries it (docs/alert-schema.md), for sink tests. */
export function alertFixture(over: Partial<Alert> = {}): Alert {
  return {
    schema: 'tidewatch.alert/1', id: 'tw1-0123456789abcdef', kind: 'horizontal-scan', severity: 'high',
    host: '10.60.2.14', role: 'source', start: '2026-03-10T09:00:00.000Z', end: '2026-03-10T09:01:00.000Z',
    state: 'open', feature: 'max_peers_per_port', observed: 254, expected: 2, low: 0, high: 5, score: 17.256,
    evidence: { top_peers: [], top_ports: [{ port: 445, count: 254 }], sample_flows: [], flows: 254, packets: 254, bytes: 11176 },
    rule: 'scan.horizontal', sensor: 'gw', ...over,
  };
}
