import { readCapture } from '../capture/read.js';
import type { PacketSink } from '../capture/types.js';
import { Decoder } from '../decode/decoder.js';
import { inputLabel, type ByteSource } from '../ingest/source.js';
import type { IngestOptions, IngestSummary } from '../ingest/types.js';
import type { InputProblem } from '../util/problem.js';
import type { FlowSink } from './record.js';
import { FlowTable } from './table.js';

/**
 * The capture ingest path: ByteSource -> capture reader -> decoder -> flow table -> sink. Bad data never
 * throws: reader problems, decode skip reasons and flow-table evictions are counted in the summary.
 */
export async function ingestCapture(src: ByteSource, sink: FlowSink, opts: IngestOptions): Promise<IngestSummary> {
  const decoder = new Decoder();
  const view = decoder.view;
  const table = new FlowTable({
    windowMs: opts.windowMs,
    idleTimeoutMs: opts.idleTimeoutMs,
    activeTimeoutMs: opts.activeTimeoutMs,
    maxFlows: opts.maxFlows,
    exporter: inputLabel(src.name),
  }, sink);
  // event-time span [first, last] in a typed array: a double kept in a closure variable would be
  // boxed anew on every store
  const span = Float64Array.of(NaN, NaN);
  // UDP datagrams to a flow-export port that start like an IPFIX or NetFlow v9 message: a capture made
  // of them is better read with --input-format export-capture (the CLI says so)
  let exportLike = 0;
  // one closure per input, none per packet
  const onPacket: PacketSink = (buf, off, capLen, _origLen, tsSec, tsNs, linkType) => {
    const ts = tsSec * 1000 + tsNs / 1e6;
    if (!(ts >= span[0]!)) span[0] = ts;
    if (!(ts <= span[1]!)) span[1] = ts;
    if (decoder.decode(buf, off, capLen, linkType)) {
      if (view.proto === 17 && isExportPort(view.dport) && looksLikeExport(buf, view.l4Offset, view.l4Limit)) exportLike++;
      table.add(view, ts);
    } else table.advance(ts);
  };
  let stoppedBy: InputProblem | undefined;
  const onProblem = (p: InputProblem) => {
    if (p.fatal && !stoppedBy) stoppedBy = p;
    opts.onProblem?.(p);
  };
  const cap = await readCapture(src, onPacket, onProblem);
  table.flush();

  const problemCounts: Record<string, number> = { ...cap.problemCounts };
  for (const part of [decoder.stats.toObject(), table.problemCounts()]) {
    for (const [k, n] of Object.entries(part)) problemCounts[k] = (problemCounts[k] ?? 0) + n;
  }
  const ts = table.stats;
  const summary: IngestSummary = {
    file: src.name,
    format: cap.format === 'unknown' ? (opts.inputFormat ?? 'pcap') : cap.format,
    packets: cap.packets,
    records: cap.packets,
    bytes: ts.bytes,
    flows: ts.records,
    firstMs: span[0]!,
    lastMs: span[1]!,
    problemCounts: sortedKeys(problemCounts),
    truncated: cap.truncated,
    counters: {
      capturedBytes: cap.capturedBytes,
      inputBytes: cap.inputBytes,
      decodedPackets: decoder.stats.decoded,
      skippedPackets: decoder.stats.packets - decoder.stats.decoded,
      tunnelsOpened: decoder.stats.decapsulated,
      distinctFlows: ts.flowsCreated,
      evictedFlows: ts.evicted,
      droppedByCapture: cap.droppedByCapture,
      untimed: cap.untimed ? 1 : 0,
      exportLikeDatagrams: exportLike,
    },
  };
  if (stoppedBy) summary.stoppedBy = stoppedBy;
  return summary;
}

/** Collector ports: 4739 (IPFIX, IANA), 2055, 9995, 9996 (NetFlow: common practice, no source). */
function isExportPort(p: number): boolean {
  return p === 4739 || p === 2055 || p === 9995 || p === 9996;
}

/** The UDP payload starts with version 10 and a plausible length, version 9, or version 5 and a count of 1..30. */
function looksLikeExport(b: Uint8Array, l4: number, limit: number): boolean {
  const p = l4 + 8;
  if (l4 < 0 || p + 4 > limit || b[p] !== 0) return false;
  const n = (b[p + 2]! << 8) | b[p + 3]!;
  return b[p + 1] === 9 || (b[p + 1] === 10 && n >= 16) || (b[p + 1] === 5 && n >= 1 && n <= 30);
}

function sortedKeys(o: Record<string, number>): Record<string, number> {
  return Object.fromEntries(Object.entries(o).sort((a, b) => a[0].localeCompare(b[0])));
}
