import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { PcapWriter } from '../../src/capture/writer.js';
import { icmp, ipv4, tcp, udp, ACK, RST, SYN } from '../bench/frames.js';
import { replayFiles } from './run-sensor.js';

const dir = mkdtempSync(join(tmpdir(), 'tidewatch-trace-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const T0 = 1_773_133_200; // 2026-03-10T09:00:00Z
const HOST = '10.60.1.5', FAR = '198.51.100.20';

/**
 * A capture (raw IPv4, LINKTYPE_RAW 101) with three traceroutes from one inside host: 30 hops of three
 * UDP probes on ports 33434 and up, each answered by an ICMP time exceeded from the hop's router
 * quoting it, the last hop by the target's port unreachable (RFC 792 types 11 and 3, as traceroute
 * works, from memory); then a real vertical scan of 100 closed ports on another target, refused.
 */
function writeCapture(path: string): void {
  const w = new PcapWriter(path, { linkType: 101 });
  const put = (frame: Uint8Array, t: number) => w.write(frame, 0, frame.length, frame.length, Math.floor(t), Math.round((t % 1) * 1e9));
  for (let run = 0; run < 3; run++) {
    for (let i = 0; i < 90; i++) {
      const t = T0 + run * 120 + 10 + i * 0.2;
      const probe = ipv4({ src: HOST, dst: FAR, proto: 17, payload: udp(40_000 + run * 100 + i, 33_434 + i, 32) });
      put(probe, t);
      const last = i >= 87;
      const from = last ? FAR : `203.0.113.${1 + Math.floor(i / 3)}`;
      put(ipv4({ src: from, dst: HOST, proto: 1, payload: icmp(last ? 3 : 11, last ? 3 : 0, probe.subarray(0, 28)) }), t + 0.01);
    }
  }
  for (let p = 0; p < 100; p++) {
    const t = T0 + 400 + p * 0.1;
    put(ipv4({ src: HOST, dst: '10.60.0.9', proto: 6, payload: tcp(50_000 + p, 1000 + p, SYN) }), t);
    put(ipv4({ src: '10.60.0.9', dst: HOST, proto: 6, payload: tcp(1000 + p, 50_000 + p, RST | ACK) }), t + 0.001);
  }
  w.close();
}

describe('traceroute is no scan (RFC 792 time exceeded quoting the probe)', () => {
  it('three traceroutes raise nothing; a refused port sweep by the same host is a vertical scan', async () => {
    const file = join(dir, 'trace.pcap');
    writeCapture(file);
    const { alerts } = await replayFiles([file], ['10.0.0.0/8']);
    const open = alerts.filter((a) => a.state === 'open').map((a) => [a.kind, a.host, a.evidence['peer'] ?? null]);
    expect(open).toEqual([['vertical-scan', HOST, '10.60.0.9']]);
  });
});
