import { readCapture } from '../capture/read.js';
import type { PacketSink } from '../capture/types.js';
import { Decoder } from '../decode/decoder.js';
import type { FlowSink } from '../flow/record.js';
import { isExportDatagram } from '../ingest/export-sniff.js';
import type { ByteSource } from '../ingest/source.js';
import type { IngestOptions, IngestSummary } from '../ingest/types.js';
import type { InputProblem } from '../util/problem.js';
import { Ipv4TextCache, Ipv6TextCache } from '../flow/addr-text.js';
import { ExporterDecoder } from './exporter-decoder.js';
import { IPFIX_VERSION } from './ipfix.js';
import { V5_VERSION } from './netflow5.js';
import { TemplateBudget } from './session.js';

/** Exporters (address and port) followed in one capture, as the collector does (ours, no source). */
export const MAX_CAPTURED_EXPORTERS = 4096;

/**
 * A capture (pcap or pcapng) of flow-export traffic: each UDP datagram that carries an IPFIX message
 * (RFC 7011 section 10.3: one message per datagram), a NetFlow v9 (RFC 3954) or v5 export packet is decoded
 * as the collector would have decoded it on arrival, with templates scoped per exporter address and
 * port. The flows are the exported ones, timed by the exporter; the capture's own packets are not
 * counted as flows. Other packets are counted and skipped. Fragmented datagrams are not reassembled:
 * they are counted (`fragmentedDatagrams`) and skipped.
 */
export async function ingestExportCapture(src: ByteSource, sink: FlowSink, opts: IngestOptions): Promise<IngestSummary> {
  const decoder = new Decoder();
  const v = decoder.view;
  const budget = new TemplateBudget();
  const exporters = new Map<string, ExporterDecoder>();
  const text4 = new Ipv4TextCache(), text6 = new Ipv6TextCache();
  const count = { exportDatagrams: 0, otherPackets: 0, fragmentedDatagrams: 0, truncatedDatagrams: 0, exportersOverCap: 0 };
  let stoppedBy: InputProblem | undefined;
  const onProblem = (p: InputProblem) => {
    if (p.fatal && !stoppedBy) stoppedBy = p;
    opts.onProblem?.(p);
  };

  const exporterFor = (version: number): ExporterDecoder | null => {
    const s6 = v.src6;
    const addr = v.family === 4 ? text4.text(v.src4) : `[${text6.text(s6[0]!, s6[1]!, s6[2]!, s6[3]!)}]`;
    const name = `${addr}:${v.sport}`;
    const k = `${version} ${name}`;
    let e = exporters.get(k);
    if (e) return e;
    if (exporters.size >= MAX_CAPTURED_EXPORTERS) { count.exportersOverCap++; return null; }
    const format = version === IPFIX_VERSION ? 'ipfix' : version === V5_VERSION ? 'netflow5' : 'netflow9';
    e = new ExporterDecoder(format, src.name, name, sink, budget, onProblem);
    exporters.set(k, e);
    return e;
  };

  const onPacket: PacketSink = (buf, off, capLen, _origLen, _tsSec, _tsNs, linkType, _fileOff, dataOff) => {
    // an export datagram by the same rule as the sniffing: the version word on a collector port, the
    // whole datagram's structure on any other (a DNS query with id 9 is not a NetFlow packet)
    if (!decoder.decode(buf, off, capLen, linkType) || v.proto !== 17 || !isExportDatagram(buf, v.l4Offset, v.l4Limit, v.sport, v.dport)) {
      count.otherPackets++;
      return;
    }
    const l4 = v.l4Offset;
    const payload = l4 + 8;
    const version = (buf[payload]! << 8) | buf[payload + 1]!;
    if (!v.unfragmented) {
      count.fragmentedDatagrams++;
      return;
    }
    count.exportDatagrams++;
    const udpEnd = l4 + ((buf[l4 + 4]! << 8) | buf[l4 + 5]!);
    const end = udpEnd < v.l4Limit ? udpEnd : v.l4Limit;
    // problem offsets inside a message name the file's own bytes
    const inputOff = dataOff + (payload - off);
    if (udpEnd > v.l4Limit) {
      count.truncatedDatagrams++;
      onProblem({ file: src.name, offset: inputOff, reason: 'truncated-datagram', message: `export datagram cut by the capture (${udpEnd - v.l4Limit} bytes missing); decoded as far as it goes`, fatal: false });
    }
    exporterFor(version)?.datagram(buf, payload, end - payload, inputOff);
  };

  const cap = await readCapture(src, onPacket, onProblem);
  const counters: Record<string, number> = {};
  const problems: Record<string, number> = { ...cap.problemCounts };
  let bytes = 0, flows = 0, firstMs = NaN, lastMs = NaN;
  for (const e of exporters.values()) {
    e.finish();
    const c = e.session.counters;
    for (const [k, n] of Object.entries(c.toObject())) counters[k] = k === 'samplingInterval' ? Math.max(counters[k] ?? 0, n) : (counters[k] ?? 0) + n;
    for (const [k, n] of Object.entries(c.problems.toObject())) problems[k] = (problems[k] ?? 0) + n;
    bytes += c.bytes;
    flows += c.flows;
    if (!(c.firstMs >= firstMs)) firstMs = c.firstMs;
    if (!(c.lastMs <= lastMs)) lastMs = c.lastMs;
  }
  if (count.truncatedDatagrams > 0) problems['truncated-datagram'] = count.truncatedDatagrams;
  const summary: IngestSummary = {
    file: src.name,
    format: 'export-capture',
    packets: cap.packets,
    records: counters['records'] ?? 0,
    bytes,
    flows,
    firstMs,
    lastMs,
    problemCounts: Object.fromEntries(Object.entries(problems).sort((a, b) => a[0].localeCompare(b[0]))),
    truncated: cap.truncated,
    counters: { ...counters, ...count, exporters: exporters.size, decodedPackets: decoder.stats.decoded },
  };
  if (stoppedBy) summary.stoppedBy = stoppedBy;
  return summary;
}
