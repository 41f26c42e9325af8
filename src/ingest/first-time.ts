import { open, stat } from 'node:fs/promises';
import { constants, gunzipSync } from 'node:zlib';
import { CaptureParser } from '../capture/parser.js';
import { sniffFormat } from './sniff.js';

/** Leading octets read to find a capture's first packet (its file header and first blocks). */
const PEEK_BYTES = 256 * 1024;
/** Of a gzipped file, the compressed octets inflated, and the most they may inflate to. */
const GZIP_PEEK_BYTES = 64 * 1024;
const INFLATED_BYTES = 16 * 1024 * 1024;

/**
 * The event time (epoch ms) of a capture's first packet (pcap, pcapng, or either gzipped), from its
 * first PEEK_BYTES; null for stdin, pipes and devices (nothing is read from them), flow exports and
 * logs, unreadable files, or no packet there.
 */
export async function firstPacketTime(name: string): Promise<number | null> {
  if (name === '-') return null;
  try {
    // a pipe or device (process substitution, /dev/stdin) is not even opened: its writer would see
    // this reader go away, and what was read here would be lost to the replay
    if (!(await stat(name)).isFile()) return null;
    const fh = await open(name, 'r');
    let head: Uint8Array;
    try {
      const buf = Buffer.alloc(PEEK_BYTES);
      const { bytesRead } = await fh.read(buf, 0, PEEK_BYTES, 0);
      head = buf.subarray(0, bytesRead);
    } finally {
      await fh.close();
    }
    // a gzip prefix inflates as far as it goes (sync flush: no error at its cut end), within bounds
    if (head.length >= 2 && head[0] === 0x1f && head[1] === 0x8b) {
      head = gunzipSync(head.subarray(0, GZIP_PEEK_BYTES), { finishFlush: constants.Z_SYNC_FLUSH, maxOutputLength: INFLATED_BYTES });
    }
    const format = sniffFormat(head.subarray(0, 64));
    if (format !== 'pcap' && format !== 'pcapng') return null;
    let first: number | null = null;
    const parser = new CaptureParser(name, (_buf, _off, _cap, _orig, tsSec, tsNs) => { first ??= tsSec * 1000 + tsNs / 1e6; });
    parser.push(head);
    return first;
  } catch {
    return null;
  }
}

/**
 * Captures in the order of their first packets (a stable sort; rotated files named file1 .. file10
 * list out of time order), so that one read after a later one is not all late. Inputs are left as
 * given when any of them is no capture or its first time is unknown.
 */
export async function inTimeOrder(names: readonly string[]): Promise<string[]> {
  if (names.length < 2) return [...names];
  const times: number[] = [];
  for (const n of names) {
    const t = await firstPacketTime(n);
    if (t === null) return [...names];
    times.push(t);
  }
  return names.map((n, i) => ({ n, i, t: times[i]! })).sort((a, b) => a.t - b.t || a.i - b.i).map((e) => e.n);
}
