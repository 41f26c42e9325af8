import type { FlowSink } from '../flow/record.js';
import { inputLabel, type ByteSource } from '../ingest/source.js';
import type { IngestOptions, IngestSummary, InputFormat } from '../ingest/types.js';
import { driveFrames, resync, type FrameStep } from './framing.js';
import { IPFIX_HEADER, IPFIX_VERSION, IpfixDecoder } from './ipfix.js';
import { NetflowV9Decoder, V9_HEADER, V9_VERSION, v9PacketEnd } from './netflow9.js';
import type { ExportSession } from './session.js';

const isIpfixHeader = (w: Uint8Array, p: number): boolean =>
  w[p] === 0 && w[p + 1] === IPFIX_VERSION && ((w[p + 2]! << 8) | w[p + 3]!) >= IPFIX_HEADER;
const isV9Header = (w: Uint8Array, p: number): boolean => w[p] === 0 && w[p + 1] === V9_VERSION;

/**
 * IPFIX File (RFC 5655 section 7; METHODS.md 3.9): messages back to back, framed by their Length.
 * A header that is not version 10 with length >= 16 loses the framing: it is reported once and
 * reading resumes at the next plausible header.
 */
export function ipfixFileStep(dec: IpfixDecoder): FrameStep {
  let lost = false;
  return (w, n, base) => {
    let p = 0;
    while (n - p >= IPFIX_HEADER) {
      if (isIpfixHeader(w, p)) {
        const len = (w[p + 2]! << 8) | w[p + 3]!;
        if (p + len > n) break;
        dec.decodeMessage(w, p, len, base + p);
        lost = false;
        p += len;
        continue;
      }
      if (!lost) {
        const v = (w[p]! << 8) | w[p + 1]!, len = (w[p + 2]! << 8) | w[p + 3]!;
        dec.session.problem('bad-header', base + p, `not an IPFIX message header (version ${v}, length ${len}); skipping to the next header`);
        lost = true;
      }
      p = resync(w, p + 1, n, 4, isIpfixHeader);
    }
    return p;
  };
}

/** NetFlow v9 export packets back to back (no length field: each ends where the next header starts). */
export function v9FileStep(dec: NetflowV9Decoder): FrameStep {
  let lost = false;
  return (w, n, base, eof) => {
    let p = 0;
    while (n - p >= (eof ? 1 : V9_HEADER)) {
      if (n - p >= V9_HEADER && isV9Header(w, p)) {
        const end = v9PacketEnd(w, p, n, eof);
        if (end < 0) break;
        dec.decodePacket(w, p, end, base + p);
        lost = false;
        p = end;
        continue;
      }
      if (eof && n - p < V9_HEADER) break;
      if (!lost) {
        dec.session.problem('bad-header', base + p, `not a NetFlow v9 packet header (version ${(w[p]! << 8) | w[p + 1]!}); skipping to the next header`);
        lost = true;
      }
      p = resync(w, p + 1, n, 2, isV9Header);
    }
    return p;
  };
}

function summary(file: string, format: InputFormat, s: ExportSession, truncatedBytes: number): IngestSummary {
  const c = s.counters;
  return {
    file, format,
    packets: c.records,
    records: c.records,
    bytes: c.bytes,
    flows: c.flows,
    firstMs: c.firstMs,
    lastMs: c.lastMs,
    problemCounts: c.problems.toObject(),
    truncated: truncatedBytes > 0,
    counters: c.toObject(),
  };
}

function reportTruncation(s: ExportSession, src: ByteSource, tail: number, what: string): void {
  if (tail > 0) s.problem('truncated', src.consumed() - tail, `input ends inside ${what} (${tail} bytes left)`);
}

/** Ingestor for IPFIX files and streams (stdin). Exporter label: base name + `/ODID`. */
export async function ingestIpfix(src: ByteSource, sink: FlowSink, opts: IngestOptions): Promise<IngestSummary> {
  const dec = new IpfixDecoder(src.name, inputLabel(src.name), sink, undefined, opts.onProblem);
  const tail = await driveFrames(src, ipfixFileStep(dec));
  reportTruncation(dec.session, src, tail, 'an IPFIX message');
  dec.finish();
  return summary(src.name, 'ipfix', dec.session, tail);
}

/** Ingestor for NetFlow v9 packet files and streams. Exporter label: base name + `/SourceID`. */
export async function ingestNetflowV9(src: ByteSource, sink: FlowSink, opts: IngestOptions): Promise<IngestSummary> {
  const dec = new NetflowV9Decoder(src.name, inputLabel(src.name), sink, undefined, opts.onProblem);
  const tail = await driveFrames(src, v9FileStep(dec));
  reportTruncation(dec.session, src, tail, 'a NetFlow v9 packet');
  dec.finish();
  return summary(src.name, 'netflow9', dec.session, tail);
}
