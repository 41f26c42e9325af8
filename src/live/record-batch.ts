import { OUTCOMES, type FlowRecord, type Outcome } from '../flow/record.js';

/** Numbers per record in a batch: the numeric fields, then indexes into the batch's string table. */
const STRIDE = 15;
const OUTCOME_INDEX = new Map<Outcome, number>(OUTCOMES.map((o, i) => [o, i]));

/** Flow records packed for a transfer between threads: numbers in one buffer, strings in a table. */
export interface RecordBatch {
  count: number;
  numbers: Float64Array;
  strings: string[];
}

/**
 * Packs records as they come (the collector thread's sink) into a batch that moves to the main thread
 * as one transferred buffer instead of a structured clone of every object.
 */
export class BatchWriter {
  private numbers: Float64Array;
  private strings: string[] = [];
  private readonly index = new Map<string, number>();
  count = 0;

  constructor(readonly capacity: number) {
    // src and dst indexes share one number, 16 bits each: three strings a record at most
    if (capacity * 3 > 65_536) throw new RangeError(`batch capacity ${capacity} is over ${Math.floor(65_536 / 3)}`);
    this.numbers = new Float64Array(capacity * STRIDE);
  }

  get full(): boolean {
    return this.count >= this.capacity;
  }

  add(r: FlowRecord): void {
    const n = this.numbers, o = this.count * STRIDE;
    n[o] = r.start; n[o + 1] = r.end; n[o + 2] = r.proto; n[o + 3] = r.sport; n[o + 4] = r.dport;
    n[o + 5] = r.pkts; n[o + 6] = r.bytes; n[o + 7] = r.rpkts; n[o + 8] = r.rbytes; n[o + 9] = r.flags; n[o + 10] = r.rflags;
    n[o + 11] = OUTCOME_INDEX.get(r.outcome)!; n[o + 12] = r.vlan ?? -1;
    n[o + 13] = this.str(r.src) * 65536 + this.str(r.dst);
    n[o + 14] = this.str(r.exporter);
    this.count++;
  }

  /** The batch so far (its buffer is handed over); the writer starts a new one. */
  take(): RecordBatch {
    const b: RecordBatch = { count: this.count, numbers: this.numbers, strings: this.strings };
    this.numbers = new Float64Array(this.capacity * STRIDE);
    this.strings = [];
    this.index.clear();
    this.count = 0;
    return b;
  }

  private str(s: string): number {
    let i = this.index.get(s);
    if (i === undefined) {
      i = this.strings.length;
      this.strings.push(s);
      this.index.set(s, i);
    }
    return i;
  }
}

/** Unpacks a batch into records, in order, for the sink. */
export function readBatch(b: RecordBatch, sink: (r: FlowRecord) => void): void {
  const n = b.numbers, s = b.strings;
  for (let i = 0; i < b.count; i++) {
    const o = i * STRIDE;
    const pair = n[o + 13]!;
    const r: FlowRecord = {
      start: n[o]!, end: n[o + 1]!, proto: n[o + 2]!, src: s[Math.floor(pair / 65536)]!, dst: s[pair % 65536]!,
      sport: n[o + 3]!, dport: n[o + 4]!, pkts: n[o + 5]!, bytes: n[o + 6]!, rpkts: n[o + 7]!, rbytes: n[o + 8]!,
      flags: n[o + 9]!, rflags: n[o + 10]!, outcome: OUTCOMES[n[o + 11]!]!, exporter: s[n[o + 14]!]!,
    };
    if (n[o + 12]! >= 0) r.vlan = n[o + 12]!;
    sink(r);
  }
}
