import type { FlowSink } from '../flow/record.js';
import { inputLabel, type ByteSource } from '../ingest/source.js';
import type { IngestOptions, IngestSummary, InputFormat } from '../ingest/types.js';
import { driveFrames, resync, type FrameStep } from './framing.js';
import { IPFIX_HEADER, IPFIX_VERSION, IpfixDecoder } from './ipfix.js';
import { NetflowV5Decoder, V5_HEADER, v5PacketLength } from './netflow5.js';
import { NetflowV9Decoder, V9_HEADER, V9_VERSION, v9PacketEnd } from './netflow9.js';
import type { ExportSession } from './session.js';

const isIpfixHeader = (w: Uint8Array, p: number): boolean =>
  w[p] === 0 && w[p + 1] === IPFIX_VERSION && ((w[p + 2]! << 8) | w[p + 3]!) >= IPFIX_HEADER;
const isV9Header = (w: Uint8Array, p: number): boolean => w[p] === 0 && w[p + 1] === V9_VERSION;

/**
 * Units that carry their own length, back to back: `unitLength` is the length of the plausible header
 * at `p` (-1 when there is none). A header that is not plausible loses the framing: it is reported once
 * (`what` describes it) and reading resumes at the next plausible header.
 */
function lengthFramedStep(
  head: number,
  unitLength: (w: Uint8Array, p: number) => number,
  decode: (w: Uint8Array, p: number, len: number, at: number) => void,
  session: ExportSession,
  what: (w: Uint8Array, p: number) => string,
): FrameStep {
  let lost = false;
  const plausible = (w: Uint8Array, p: number) => unitLength(w, p) > 0;
  return (w, n, base) => {
    let p = 0;
    while (n - p >= head) {
      const len = unitLength(w, p);
      if (len > 0) {
        if (p + len > n) break;
        decode(w, p, len, base + p);
        lost = false;
        p += len;
        continue;
      }
      if (!lost) {
        session.problem('bad-header', base + p, `${what(w, p)}; skipping to the next header`);
        lost = true;
      }
      p = resync(w, p + 1, n, 4, plausible);
    }
    return p;
  };
}

const word = (w: Uint8Array, p: number) => (w[p]! << 8) | w[p + 1]!;

/**
 * IPFIX File (RFC 5655 section 7; METHODS.md 3.9): messages back to back, framed by their Length;
 * a header that is not version 10 with length >= 16 loses the framing.
 */
export function ipfixFileStep(dec: IpfixDecoder): FrameStep {
  return lengthFramedStep(IPFIX_HEADER, (w, p) => (isIpfixHeader(w, p) ? word(w, p + 2) : -1),
    (w, p, len, at) => { dec.decodeMessage(w, p, len, at); }, dec.session,
    (w, p) => `not an IPFIX message header (version ${word(w, p)}, length ${word(w, p + 2)})`);
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

/** NetFlow v5 export packets back to back, each framed by its record count. */
export function v5FileStep(dec: NetflowV5Decoder): FrameStep {
  return lengthFramedStep(V5_HEADER, (w, p) => v5PacketLength(w, p, V5_HEADER),
    (w, p, len, at) => { dec.decodePacket(w, p, len, at); }, dec.session,
    (w, p) => `not a NetFlow v5 packet header (version ${word(w, p)}, count ${word(w, p + 2)})`);
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

/** Drives one export-file decoder over the whole source; a cut last unit is reported as truncated. */
async function ingestFramed<D extends { session: ExportSession; finish(): void }>(
  src: ByteSource, format: InputFormat, dec: D, step: (d: D) => FrameStep, unit: string,
): Promise<IngestSummary> {
  const tail = await driveFrames(src, step(dec));
  reportTruncation(dec.session, src, tail, unit);
  dec.finish();
  return summary(src.name, format, dec.session, tail);
}

/** Ingestor for IPFIX files and streams (stdin). Exporter label: base name + `/ODID`. */
export function ingestIpfix(src: ByteSource, sink: FlowSink, opts: IngestOptions): Promise<IngestSummary> {
  return ingestFramed(src, 'ipfix', new IpfixDecoder(src.name, inputLabel(src.name), sink, undefined, opts.onProblem), ipfixFileStep, 'an IPFIX message');
}

/** Ingestor for NetFlow v5 packet files and streams. Exporter label: base name + `/engine`. */
export function ingestNetflowV5(src: ByteSource, sink: FlowSink, opts: IngestOptions): Promise<IngestSummary> {
  return ingestFramed(src, 'netflow5', new NetflowV5Decoder(src.name, inputLabel(src.name), sink, undefined, opts.onProblem), v5FileStep, 'a NetFlow v5 packet');
}

/** Ingestor for NetFlow v9 packet files and streams. Exporter label: base name + `/SourceID`. */
export function ingestNetflowV9(src: ByteSource, sink: FlowSink, opts: IngestOptions): Promise<IngestSummary> {
  return ingestFramed(src, 'netflow9', new NetflowV9Decoder(src.name, inputLabel(src.name), sink, undefined, opts.onProblem), v9FileStep, 'a NetFlow v9 packet');
}
