import { OUTCOMES, type FlowRecord, type Outcome } from './record.js';

/** Numbers per record in a batch: the numeric fields, then indexes into the string table. */
const STRIDE = 16;
const OUTCOME_INDEX = new Map<Outcome, number>(OUTCOMES.map((o, i) => [o, i]));
/** Strings the two sides hold before they start a new table (ours: bounds memory on hostile inputs). */
export const STRING_TABLE_CAP = 1 << 20;

/**
 * Flow records packed for a transfer between threads: numbers in one buffer, and the strings
 * (addresses, exporter names) first met in this batch. The string table lives on both sides across
 * batches, so an address crosses once, not once per record or batch, and the receiving side hands out
 * the same string object every time (its hash is computed once by the maps that key on it).
 */
export interface RecordBatch {
  count: number;
  numbers: Float64Array;
  /** Strings appended to the table by this batch, after `reset` (the table starts again, empty) if set. */
  strings: string[];
  reset: boolean;
}

/**
 * Packs records as they come (a reading or collector thread's sink) into batches that move to the
 * main thread as one transferred buffer instead of a structured clone of every object.
 */
export class BatchWriter {
  private numbers: Float64Array;
  private strings: string[] = [];
  private reset = false;
  private readonly index = new Map<string, number>();
  private lastExporter: string | null = null;
  private lastExporterIndex = -1;
  count = 0;

  /** @param tableCap strings held before the table starts again (tests make it small) */
  constructor(readonly capacity: number, private readonly tableCap = STRING_TABLE_CAP) {
    if (!(Number.isInteger(capacity) && capacity >= 1)) throw new RangeError(`batch capacity ${capacity} is not a positive integer`);
    this.numbers = new Float64Array(capacity * STRIDE);
  }

  get full(): boolean {
    return this.count >= this.capacity;
  }

  add(r: FlowRecord): void {
    // a table at its cap starts again at a batch's first record, so no record refers across the reset
    if (this.count === 0 && this.index.size >= this.tableCap) { this.index.clear(); this.reset = true; this.lastExporter = null; }
    const n = this.numbers, o = this.count * STRIDE;
    n[o] = r.start; n[o + 1] = r.end; n[o + 2] = r.proto; n[o + 3] = r.sport; n[o + 4] = r.dport;
    n[o + 5] = r.pkts; n[o + 6] = r.bytes; n[o + 7] = r.rpkts; n[o + 8] = r.rbytes; n[o + 9] = r.flags; n[o + 10] = r.rflags;
    n[o + 11] = OUTCOME_INDEX.get(r.outcome)!; n[o + 12] = r.vlan ?? -1;
    n[o + 13] = this.str(r.src); n[o + 14] = this.str(r.dst);
    // one exporter name for a whole input as a rule: no lookup while it stays the same
    if (r.exporter !== this.lastExporter) { this.lastExporter = r.exporter; this.lastExporterIndex = this.str(r.exporter); }
    n[o + 15] = this.lastExporterIndex;
    this.count++;
  }

  /** The batch so far (its buffer is handed over); the writer starts a new one. */
  take(): RecordBatch {
    const b: RecordBatch = { count: this.count, numbers: this.numbers, strings: this.strings, reset: this.reset };
    this.numbers = new Float64Array(this.capacity * STRIDE);
    this.strings = [];
    this.reset = false;
    this.count = 0;
    return b;
  }

  private str(s: string): number {
    let i = this.index.get(s);
    if (i === undefined) {
      i = this.index.size;
      this.strings.push(s);
      this.index.set(s, i);
    }
    return i;
  }
}

/** The receiving side of one BatchWriter: takes its batches in order and gives back the records. */
export class BatchReader {
  private table: string[] = [];

  /**
   * Gives the batch's records to `sink` in order. With `reuse`, one record object is filled anew for
   * each (for a sink that keeps none of them); otherwise each is its own object.
   */
  read(b: RecordBatch, sink: (r: FlowRecord) => void, reuse = false): void {
    if (b.reset) this.table = [];
    for (const s of b.strings) this.table.push(s);
    const n = b.numbers, s = this.table;
    for (let i = 0; i < b.count; i++) {
      const o = i * STRIDE;
      const r = reuse ? this.scratch : blankRecord();
      r.start = n[o]!; r.end = n[o + 1]!; r.proto = n[o + 2]!; r.src = s[n[o + 13]!]!; r.dst = s[n[o + 14]!]!;
      r.sport = n[o + 3]!; r.dport = n[o + 4]!; r.pkts = n[o + 5]!; r.bytes = n[o + 6]!; r.rpkts = n[o + 7]!; r.rbytes = n[o + 8]!;
      r.flags = n[o + 9]!; r.rflags = n[o + 10]!; r.outcome = OUTCOMES[n[o + 11]!]!; r.exporter = s[n[o + 15]!]!;
      // a fresh record has no vlan field unless the flow had one (as the flow table makes them)
      if (n[o + 12]! >= 0) r.vlan = n[o + 12]!;
      else if (reuse) r.vlan = undefined;
      sink(r);
    }
  }

  private readonly scratch: FlowRecord = { ...blankRecord(), vlan: undefined };
}

function blankRecord(): FlowRecord {
  return {
    start: 0, end: 0, proto: 0, src: '', dst: '', sport: 0, dport: 0, pkts: 0, bytes: 0, rpkts: 0, rbytes: 0,
    flags: 0, rflags: 0, outcome: 'n/a', exporter: '',
  };
}
