import type { FlowSink } from '../flow/record.js';
import { openSource, peekSource, gunzipSource, type ByteSource } from './source.js';
import { packedFormat, sniffFormat } from './sniff.js';
import { loaders } from './paths.js';
import type { IngestOptions, IngestSummary } from './types.js';

/**
 * Opens INPUT (a path or `-`), sniffs its format from the first bytes (gzip of any format included;
 * a capture whose first packets are mostly flow-export datagrams is read as `export-capture`), and
 * runs the matching ingest path. Throws a one-line Error only when the input cannot be opened or
 * its format is not recognised; bad data inside a recognised input is reported in the summary.
 */
export async function ingestInput(name: string, sink: FlowSink, opts: IngestOptions): Promise<IngestSummary> {
  let src: ByteSource = await openSource(name);
  let { head, read, source } = await peekSource(src, 64);
  if (head.length >= 2 && head[0] === 0x1f && head[1] === 0x8b) {
    ({ head, read, source } = await peekSource(gunzipSource(source), 64));
  }
  src = source;
  const packed = opts.inputFormat ? null : packedFormat(head);
  if (packed) {
    await src.close();
    throw new Error(`${name}: ${packed}; unpack it first (gzip is read directly)`);
  }
  let format = opts.inputFormat ?? sniffFormat(head);
  if (!format) {
    await src.close();
    throw new Error(head.length === 0 ? `${name}: empty input` : `${name}: not a recognised capture or flow export (first bytes ${hex(head.subarray(0, 8))})`);
  }
  // a capture of a router's export traffic is read as the flow exports it carries, unless asked otherwise
  let readAsExports = false;
  if (!opts.inputFormat && (format === 'pcap' || format === 'pcapng')) {
    const { looksLikeExportTraffic } = await import('./export-sniff.js');
    if (looksLikeExportTraffic(read.subarray(0, Math.min(read.length, 1 << 20)))) { format = 'export-capture'; readAsExports = true; }
  }
  const fn = await loaders.get(format)?.();
  if (!fn) {
    await src.close();
    throw new Error(`${name}: ${format} input is not supported yet`);
  }
  opts.onFormat?.(format);
  opts.onSource?.(src);
  const onRead = opts.onRead;
  if (onRead) {
    const inner = src;
    src = { name: inner.name, size: inner.size, consumed: () => inner.consumed(), close: () => inner.close(), read: () => { onRead(); return inner.read(); } };
  }
  try {
    const summary = await fn(src, sink, opts);
    if (readAsExports) summary.counters['readAsExports'] = 1;
    return summary;
  } finally {
    await src.close();
  }
}

function hex(b: Uint8Array): string {
  return [...b].map((x) => x.toString(16).padStart(2, '0')).join(' ');
}
