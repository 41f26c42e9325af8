import { readCapture } from '../capture/read.js';
import type { PacketSink } from '../capture/types.js';
import { Decoder } from '../decode/decoder.js';
import { inputLabel, type ByteSource } from '../ingest/source.js';
import { isExportDatagram } from '../ingest/export-sniff.js';
import type { IngestOptions, IngestSummary } from '../ingest/types.js';
import type { InputProblem } from '../util/problem.js';
import type { FlowSink } from './record.js';
import { FlowTable } from './table.js';
import { ForwardJumpGuard, outlierProblem } from './time-guard.js';

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
  // flow-export datagrams (ingest/export-sniff.ts): a capture made of them is better read with
  // --input-format export-capture (the CLI says so)
  let exportLike = 0;
  let stoppedBy: InputProblem | undefined;
  const onProblem = (p: InputProblem) => {
    if (p.fatal && !stoppedBy) stoppedBy = p;
    opts.onProblem?.(p);
  };
  // one closure per input, none per packet
  const take = (buf: Uint8Array, off: number, capLen: number, linkType: number, ts: number) => {
    if (!(ts >= span[0]!)) span[0] = ts;
    if (!(ts <= span[1]!)) span[1] = ts;
    if (decoder.decode(buf, off, capLen, linkType)) {
      if (view.proto === 17 && isExportDatagram(buf, view.l4Offset, view.l4Limit, view.sport, view.dport)) exportLike++;
      view.tsMs = ts;
      table.add(view);
    } else table.advance(ts);
  };
  const guard = new ForwardJumpGuard(take, (ts, latest, fileOff) => onProblem(outlierProblem(src.name, ts, latest, fileOff)));
  const onPacket: PacketSink = (buf, off, capLen, _origLen, tsSec, tsNs, linkType, fileOff) => {
    guard.packet(buf, off, capLen, linkType, tsSec * 1000 + tsNs / 1e6, fileOff);
  };
  const cap = await readCapture(src, onPacket, onProblem);
  guard.finish();
  table.flush();

  const problemCounts: Record<string, number> = { ...cap.problemCounts };
  if (guard.outliers > 0) problemCounts['timestamp-outlier'] = guard.outliers;
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
      tcpCompleted: ts.tcpCompleted,
      tcpCompletedUnseen: ts.tcpCompletedUnseen,
      droppedByCapture: cap.droppedByCapture,
      untimed: cap.untimed ? 1 : 0,
      exportLikeDatagrams: exportLike,
      ...(decoder.stats.undecodedLinkType >= 0 ? { undecodedLinkType: decoder.stats.undecodedLinkType } : {}),
    },
  };
  if (stoppedBy) summary.stoppedBy = stoppedBy;
  return summary;
}

function sortedKeys(o: Record<string, number>): Record<string, number> {
  return Object.fromEntries(Object.entries(o).sort((a, b) => a[0].localeCompare(b[0])));
}
