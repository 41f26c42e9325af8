import type { FlowSink } from '../flow/record.js';
import type { InputProblem } from '../util/problem.js';
import type { ByteSource } from './source.js';

/** `export-capture`: a capture of IPFIX / NetFlow export datagrams, taken when its first packets are mostly those (ingest/export-sniff.ts) or when asked for. */
export type InputFormat = 'pcap' | 'pcapng' | 'ipfix' | 'netflow9' | 'netflow5' | 'csv' | 'jsonl' | 'vpc-flowlog' | 'export-capture';
export const INPUT_FORMATS: readonly InputFormat[] = ['pcap', 'pcapng', 'ipfix', 'netflow9', 'netflow5', 'csv', 'jsonl', 'vpc-flowlog', 'export-capture'];

export interface IngestOptions {
  /** Flow updates are cut at multiples of this (ms); 0 = no cuts. Default 60 000. */
  windowMs: number;
  idleTimeoutMs: number;
  activeTimeoutMs: number;
  maxFlows: number;
  /** Overrides sniffing (`--input-format`). */
  inputFormat?: InputFormat;
  /** Called once the input's format is known, before its first record. */
  onFormat?: (format: InputFormat) => void;
  /** Called for every problem as it is met (the CLI prints them, bounded). */
  onProblem?: (p: InputProblem) => void;
  /** Called before each read of more input bytes (the reading thread sends what it has batched). */
  onRead?: () => void;
  /** Called with the opened source before its first record (progress polls its size and consumed()). */
  onSource?: (src: SourceProgress) => void;
}

/** What progress may know of an input being read: its name, size (-1 unknown) and bytes consumed. */
export interface SourceProgress {
  readonly name: string;
  readonly size: number;
  consumed(): number;
}

export const DEFAULT_INGEST: IngestOptions = {
  windowMs: 60_000,
  idleTimeoutMs: 60_000,
  activeTimeoutMs: 300_000,
  maxFlows: 2_000_000,
};

export interface IngestSummary {
  file: string;
  format: InputFormat;
  /** Packets read (captures) or records read (flow exports). */
  packets: number;
  records: number;
  /** IP-layer bytes counted into flows. */
  bytes: number;
  flows: number;
  /** Event-time span, epoch ms (NaN when nothing was read). */
  firstMs: number;
  lastMs: number;
  /** Problems by reason (decode problems, reader problems, flow-table evictions, ...). */
  problemCounts: Record<string, number>;
  /** Fatal problem that stopped the input, if any. */
  stoppedBy?: InputProblem;
  truncated: boolean;
  /** Any further counters the format reports (templates, sequence losses, capture drops, ...). */
  counters: Record<string, number>;
}

/** One ingest path: reads a whole source, calls `sink` per FlowRecord, never throws on bad data. */
export type Ingestor = (src: ByteSource, sink: FlowSink, opts: IngestOptions) => Promise<IngestSummary>;
