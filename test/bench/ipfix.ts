import { open, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { ingestIpfix } from '../../src/flowlog/file-ingest.js';
import { openSource } from '../../src/ingest/source.js';
import { DEFAULT_INGEST } from '../../src/ingest/types.js';

const RECORDS = 2_100_000;
/** sourceIPv4Address, destinationIPv4Address, ports, protocol, tcpControlBits, packet and octet deltas, ms times. */
const FIELDS: [number, number][] = [[8, 4], [12, 4], [7, 2], [11, 2], [4, 1], [6, 1], [2, 8], [1, 8], [152, 8], [153, 8]];
const REC_LEN = FIELDS.reduce((a, f) => a + f[1], 0);
const PER_MSG = Math.floor((65_535 - 16 - 4 - 8 - FIELDS.length * 4) / REC_LEN);

function u16(b: Buffer, o: number, v: number) { b.writeUInt16BE(v, o); }

/** One IPFIX message with a template set and PER_MSG data records (variant `k` varies the hosts). */
function message(k: number, withTemplate: boolean): Buffer {
  const tLen = withTemplate ? 4 + 4 + FIELDS.length * 4 : 0;
  const len = 16 + tLen + 4 + PER_MSG * REC_LEN;
  const b = Buffer.alloc(len);
  u16(b, 0, 10); u16(b, 2, len);
  b.writeUInt32BE(1_700_000_000, 4);
  b.writeUInt32BE(1, 12);
  let p = 16;
  if (withTemplate) {
    u16(b, p, 2); u16(b, p + 2, tLen); u16(b, p + 4, 256); u16(b, p + 6, FIELDS.length);
    p += 8;
    for (const [ie, l] of FIELDS) { u16(b, p, ie); u16(b, p + 2, l); p += 4; }
  }
  u16(b, p, 256); u16(b, p + 2, 4 + PER_MSG * REC_LEN);
  p += 4;
  for (let i = 0; i < PER_MSG; i++) {
    b.writeUInt32BE((0x0a000000 + ((k * 97 + i) % 5000)) >>> 0, p); // 10.0.x.y: 5000 internal hosts
    b.writeUInt32BE((0xc6336400 + (i & 0xff)) >>> 0, p + 4); // 198.51.100.0/24
    u16(b, p + 8, 1024 + ((i * 7) & 0x7fff)); u16(b, p + 10, i & 1 ? 443 : 53);
    b[p + 12] = i & 1 ? 6 : 17; b[p + 13] = 0x1b;
    b.writeBigUInt64BE(BigInt(1 + (i & 15)), p + 14);
    b.writeBigUInt64BE(BigInt(60 + i * 3), p + 22);
    b.writeBigUInt64BE(BigInt(1_700_000_000_000 + i), p + 30);
    b.writeBigUInt64BE(BigInt(1_700_000_000_500 + i), p + 38);
    p += REC_LEN;
  }
  return b;
}

/** Writes a file of at least RECORDS records (64 message variants, sequence numbers kept right). */
async function generate(path: string): Promise<number> {
  const variants = Array.from({ length: 64 }, (_, k) => message(k, k === 0));
  const fh = await open(path, 'w');
  let records = 0, seq = 0, k = 0;
  const batch: Buffer[] = [];
  while (records < RECORDS) {
    const m = Buffer.from(variants[k % 64]!);
    m.writeUInt32BE(seq >>> 0, 8);
    batch.push(m);
    records += PER_MSG; seq += PER_MSG; k++;
    if (batch.length === 64) { await fh.write(Buffer.concat(batch)); batch.length = 0; }
  }
  if (batch.length) await fh.write(Buffer.concat(batch));
  await fh.close();
  return records;
}

/** Decode rate of the IPFIX file path (records/s on one core) and peak RSS. */
export async function benchIpfix(): Promise<{ name: string; rate: number; unit: string; rssMB: number; notes: string }> {
  const path = join(tmpdir(), `tidewatch-bench-${process.pid}.ipfix`);
  const written = await generate(path);
  try {
    let n = 0, octets = 0;
    const sink = (r: { bytes: number }) => { n++; octets += r.bytes; };
    const t0 = process.hrtime.bigint();
    const s = await ingestIpfix(await openSource(path), sink, DEFAULT_INGEST);
    const secs = Number(process.hrtime.bigint() - t0) / 1e9;
    const rssMB = process.resourceUsage().maxRSS / 1024;
    if (n !== written || s.counters.sequenceLost !== 0) throw new Error(`bench decoded ${n} of ${written} records`);
    return {
      name: 'ipfix-decode', rate: Math.round(n / secs), unit: 'records/s', rssMB: Math.round(rssMB),
      notes: `${n} records (${REC_LEN}-octet records, ${PER_MSG} per message) in ${secs.toFixed(2)} s; FlowRecord objects built and passed to a counting sink; ${octets} octets`,
    };
  } finally {
    await rm(path, { force: true });
  }
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  console.log(JSON.stringify(await benchIpfix()));
}
