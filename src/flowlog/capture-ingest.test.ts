import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { buildPcap, PcapngBuilder } from '../capture/testing.js';
import { ipv4 } from '../../test/bench/frames.js';
import { ingestInput } from '../ingest/index.js';
import { DEFAULT_INGEST } from '../ingest/types.js';
import type { InputProblem } from '../util/problem.js';

const dir = mkdtempSync(join(tmpdir(), 'tidewatch-expcap-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/**
 * A raw-IP packet to the IPFIX port (4739, RFC 7011 section 10.3.1) whose UDP length claims 16 octets
 * more than it carries: the export datagram was cut. Its IPFIX header starts 28 octets into the packet.
 */
function cutDatagram(): Uint8Array {
  const ipfixHeader = [0, 10, 0, 40, 0x69, 0xb0, 0x1e, 0x00, 0, 0, 0, 1, 0, 0, 0, 7];
  const udp = [0xc0, 0x00, 0x12, 0x83, 0, 8 + 40, 0, 0, ...ipfixHeader];
  return ipv4({ src: '192.0.2.1', dst: '192.0.2.9', proto: 17, payload: Uint8Array.from(udp) });
}

async function problemsOf(name: string, file: Uint8Array): Promise<InputProblem[]> {
  const path = join(dir, name);
  writeFileSync(path, file);
  const problems: InputProblem[] = [];
  await ingestInput(path, () => {}, { ...DEFAULT_INGEST, inputFormat: 'export-capture', onProblem: (p) => problems.push(p) });
  return problems.filter((p) => p.reason === 'truncated-datagram');
}

describe('export capture problem offsets name the datagram in the file (pcap record 16, pcapng EPB 28, SPB 12 octets of header; ours)', () => {
  it('in pcap, and in pcapng enhanced and simple packet blocks', async () => {
    const pkt = cutDatagram();
    const pcap = buildPcap({ linkType: 101 }, [{ sec: 1_773_133_200, sub: 0, data: pkt }]);
    // file header 24, record header 16, IPv4 20, UDP 8
    expect((await problemsOf('cut.pcap', pcap)).map((p) => p.offset)).toEqual([24 + 16 + 28]);
    // SHB 28 and IDB 20 octets, then the blocks: an EPB of 28 + 52 (padded), an SPB after it
    const ng = new PcapngBuilder().shb().idb({ linkType: 101 }).epb(0, 1_773_133_200_000_000n, pkt).spb(pkt).bytes();
    const epbData = 48 + 28;
    const spbData = 48 + 28 + ((pkt.length + 3) & ~3) + 4 + 12;
    expect((await problemsOf('cut.pcapng', ng)).map((p) => p.offset)).toEqual([epbData + 28, spbData + 28]);
  });
});
