// The ingest paths by format, each loaded when an input of its format first comes (a capture replay
// does not load the flow-export readers, nor the other way round).
import type { Ingestor, InputFormat } from './types.js';

export const loaders: ReadonlyMap<InputFormat, () => Promise<Ingestor>> = new Map<InputFormat, () => Promise<Ingestor>>([
  ['pcap', () => import('../flow/ingest.js').then((m) => m.ingestCapture)],
  ['pcapng', () => import('../flow/ingest.js').then((m) => m.ingestCapture)],
  ['ipfix', () => import('../flowlog/file-ingest.js').then((m) => m.ingestIpfix)],
  ['netflow9', () => import('../flowlog/file-ingest.js').then((m) => m.ingestNetflowV9)],
  ['netflow5', () => import('../flowlog/file-ingest.js').then((m) => m.ingestNetflowV5)],
  ['csv', () => import('../flowlog/textlog.js').then((m) => m.ingestCsv)],
  ['jsonl', () => import('../flowlog/textlog.js').then((m) => m.ingestJsonl)],
  ['vpc-flowlog', () => import('../flowlog/vpclog.js').then((m) => m.ingestVpcFlowLog)],
  ['export-capture', () => import('../flowlog/capture-ingest.js').then((m) => m.ingestExportCapture)],
]);
