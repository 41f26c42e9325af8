// Runs the compiled CLI: build first (`npx tsc -p tsconfig.json`; `npm test` does it).
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';
import { ACK, FIN, SYN, ether, icmp, ipv4, tcp, udp } from '../../test/bench/frames.js';
import { PcapWriter } from '../capture/writer.js';
import { FLOW_FIELDS } from '../flow/record.js';

const ROOT = fileURLToPath(new URL('../..', import.meta.url));
const CLI = join(ROOT, 'dist/src/cli/main.js');
const dir = mkdtempSync(join(tmpdir(), 'tidewatch-flows-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const T0 = 1_700_000_040; // seconds, a multiple of 60
const C = '10.60.1.5', S = '198.51.100.7';

function capture(name: string, frames: [number, Uint8Array][], snaplen = 65535): string {
  const path = join(dir, name);
  const w = new PcapWriter(path, { snaplen });
  for (const [t, f] of frames) w.write(f, 0, f.length, f.length, T0 + Math.floor(t), Math.round((t % 1) * 1e9));
  w.close();
  return path;
}

function flows(...args: string[]) {
  const r = spawnSync(process.execPath, [CLI, 'flows', ...args], { encoding: 'utf8' });
  return { code: r.status, out: r.stdout, err: r.stderr };
}

const session: [number, Uint8Array][] = [
  [0.1, ether(0x0800, ipv4({ src: C, dst: S, proto: 6, payload: tcp(40000, 443, SYN) }))],
  [0.2, ether(0x0800, ipv4({ src: S, dst: C, proto: 6, payload: tcp(443, 40000, SYN | ACK) }))],
  [0.3, ether(0x0800, ipv4({ src: C, dst: S, proto: 6, payload: tcp(40000, 443, ACK, 1460) }))],
  [0.4, ether(0x0800, ipv4({ src: C, dst: S, proto: 6, payload: tcp(40000, 443, FIN | ACK) }))],
  [0.5, ether(0x0800, ipv4({ src: S, dst: C, proto: 6, payload: tcp(443, 40000, FIN | ACK) }))],
  [1.0, ether(0x0800, ipv4({ src: C, dst: S, proto: 17, payload: udp(33434, 33435, 12) }))],
  [1.1, ether(0x0800, ipv4({ src: S, dst: C, proto: 1, payload: icmp(3, 3, ipv4({ src: C, dst: S, proto: 17, payload: udp(33434, 33435, 12) }).subarray(0, 28)) }))],
  [70, ether(0x0800, ipv4({ src: C, dst: S, proto: 17, payload: udp(5353, 53, 20) }), [{ vid: 30 }])],
  [70.5, ether(0x0806, new Uint8Array(28))],
];

describe('tidewatch flows (compiled CLI)', () => {
  it('prints JSON lines in FLOW_FIELDS order, with a summary on stderr; snaplen does not change bytes', () => {
    const path = capture('session.pcap', session, 96);
    const { code, out, err } = flows(path);
    expect(code).toBe(0);
    const recs = out.trim().split('\n').map((l) => JSON.parse(l) as Record<string, unknown>);
    for (const r of recs) expect(Object.keys(r)).toEqual(FLOW_FIELDS.filter((k) => k in r));
    const tcpRec = recs.find((r) => r.proto === 6)!;
    // IPv4 total length of the 1460-octet segment is 1500 although only 96 octets were captured
    expect([tcpRec.src, tcpRec.pkts, tcpRec.bytes, tcpRec.rpkts, tcpRec.outcome, tcpRec.exporter]).toEqual([C, 3, 40 + 1500 + 40, 2, 'established', 'session.pcap']);
    expect(recs.find((r) => r.proto === 17 && r.sport === 33434)!.outcome).toBe('rejected');
    expect(recs.find((r) => r.proto === 1)!.dport).toBe(771);
    expect(recs.find((r) => r.sport === 5353)!.vlan).toBe(30);
    expect(recs).toHaveLength(4);
    expect(err).toContain('9 packets');
    expect(err).toContain('2023-11-14T22:14:00.100Z');
    expect(err).toContain('arp 1');
  });

  it('--format csv has the header row and empty vlan; --window 0 and --quiet work', () => {
    const path = capture('csv.pcap', session);
    const { code, out, err } = flows('--format', 'csv', '--window', '0', '--quiet', path);
    expect(code).toBe(0);
    expect(err).toBe('');
    const lines = out.trim().split('\n');
    expect(lines[0]).toBe(FLOW_FIELDS.join(','));
    expect(lines).toHaveLength(5);
    expect(lines.find((l) => l.includes(',5353,'))!.endsWith(',30')).toBe(true);
    expect(lines.find((l) => l.includes(',443,'))!.endsWith(',')).toBe(true);
  });

  it('a truncated capture still prints its flows and exits 0, reporting the truncation', () => {
    const path = capture('cut.pcap', session);
    const bytes = spawnSync('head', ['-c', '-10', path], { encoding: 'buffer' }).stdout;
    writeFileSync(path, bytes);
    const { code, out, err } = flows(path);
    expect(code).toBe(0);
    expect(out.trim().split('\n').length).toBeGreaterThanOrEqual(3);
    expect(err).toMatch(/truncated/);
  });

  it('unreadable inputs exit 3 with one line naming the file; usage errors exit 2', () => {
    const junk = join(dir, 'junk.bin');
    writeFileSync(junk, Buffer.from([0xde, 0xad, 0xbe, 0xef, 1, 2, 3, 4]));
    let r = flows(junk);
    expect([r.code, r.out]).toEqual([3, '']);
    expect(r.err.trim().split('\n')).toHaveLength(1);
    expect(r.err).toContain('junk.bin');
    r = flows(join(dir, 'missing.pcap'));
    expect(r.code).toBe(3);
    expect(r.err).toContain('missing.pcap: cannot open');
    const badMagic = join(dir, 'bad.pcap');
    writeFileSync(badMagic, Buffer.concat([Buffer.from([0xd4, 0xc3, 0xb2, 0xa1, 9, 0, 9, 0]), Buffer.alloc(16)]));
    r = flows(badMagic);
    expect(r.code).toBe(3);
    expect(r.err.trim().split('\n')).toHaveLength(1);
    expect(flows('--format', 'xml', junk).code).toBe(2);
    expect(flows('--window', 'soon', junk).code).toBe(2);
    expect(flows('--max-flows', '0', junk).code).toBe(2);
    expect(flows('--input-format', 'pdf', junk).code).toBe(2);
  });

  it('reads stdin as `-` (exporter "stdin") and stops quietly when the reader of stdout goes away', () => {
    const many: [number, Uint8Array][] = [];
    for (let i = 0; i < 3000; i++) many.push([i / 100, ether(0x0800, ipv4({ src: C, dst: S, proto: 17, payload: udp(10000 + i, 53, 20) }))]);
    const path = capture('many.pcap', many);
    const r = spawnSync('sh', ['-c', `"${process.execPath}" "${CLI}" flows - < "${path}" | head -n 1`], { encoding: 'utf8' });
    expect(r.status).toBe(0);
    expect(JSON.parse(r.stdout).exporter).toBe('stdin');
    expect(r.stderr).not.toMatch(/EPIPE|Error/);
  });
});
