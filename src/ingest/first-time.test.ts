import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { gzipSync } from 'node:zlib';
import { afterAll, describe, expect, it } from 'vitest';
import { PcapWriter } from '../capture/writer.js';
import { ipv4, udp } from '../../test/bench/frames.js';
import { firstPacketTime, inTimeOrder } from './first-time.js';

const dir = mkdtempSync(join(tmpdir(), 'tidewatch-first-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
const golden = (f: string) => new URL(`../../test/golden/reader/${f}`, import.meta.url).pathname;

/** A raw-IP pcap of one UDP packet a second from `startSec`. */
function capture(name: string, startSec: number, packets = 3): string {
  const path = join(dir, name);
  const w = new PcapWriter(path, { linkType: 101 });
  const frame = ipv4({ src: '10.60.1.5', dst: '10.60.0.1', proto: 17, payload: udp(5000, 53, 20) });
  for (let i = 0; i < packets; i++) w.write(frame, 0, frame.length, frame.length, startSec + i, 250_000_000);
  w.close();
  return path;
}

describe('first packet time of a capture', () => {
  it('reads pcap, pcapng and gzip (times as the scapy and dpkt goldens list them: test/golden/reader)', async () => {
    expect(await firstPacketTime(golden('scapy_be_us.pcap'))).toBe(1_700_000_000_000);
    expect(await firstPacketTime(golden('dpkt_ns.pcapng'))).toBe(1_700_000_000_000);
    const gz = join(dir, 'be.pcapng.gz');
    writeFileSync(gz, gzipSync(readFileSync(golden('scapy_be.pcapng'))));
    expect(await firstPacketTime(gz)).toBe(await firstPacketTime(golden('scapy_be.pcapng')));
    expect(await firstPacketTime(capture('a.pcap', 1_773_133_200))).toBe(1_773_133_200_250);
  });

  it('does not open a pipe, whose bytes the replay needs (ours)', async () => {
    const fifo = join(dir, 'pipe');
    execFileSync('mkfifo', [fifo]);
    // opening a pipe with no writer would block: answering at once shows it was not opened
    expect(await firstPacketTime(fifo)).toBe(null);
  });

  it('is unknown for stdin, a flow log, an empty or a missing file (ours)', async () => {
    const log = join(dir, 'flows.jsonl');
    writeFileSync(log, '{"start":1}\n');
    const empty = join(dir, 'empty.pcap');
    writeFileSync(empty, '');
    expect(await Promise.all(['-', log, empty, join(dir, 'nope.pcap')].map(firstPacketTime))).toEqual([null, null, null, null]);
  });

  it('orders rotated captures by their first packets, stably; leaves the list alone when one is no capture (ours)', async () => {
    const c1 = capture('cap1', 1_773_133_200), c2 = capture('cap2', 1_773_133_300), c10 = capture('cap10', 1_773_134_100);
    const same = capture('same', 1_773_133_300);
    expect(await inTimeOrder([c1, c10, c2])).toEqual([c1, c2, c10]);
    expect(await inTimeOrder([same, c2, c1])).toEqual([c1, same, c2]);
    const log = join(dir, 'late.jsonl');
    writeFileSync(log, '{"start":1}\n');
    expect(await inTimeOrder([c10, log, c1])).toEqual([c10, log, c1]);
  });
});
