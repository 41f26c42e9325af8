import { HostModel, type Baselines, type SurgeState } from '../detect/model.js';

/**
 * Encodings of in-memory state for the state file. Typed arrays go in as their bytes (exact, host
 * byte order is little-endian on every platform Node 20 runs on); plain data as JSON where the
 * non-finite numbers JSON cannot carry (NaN, ±Infinity) are written as {"$num": "NaN"} and back.
 */

export function bytesOf(a: ArrayBufferView): Buffer {
  return Buffer.from(a.buffer, a.byteOffset, a.byteLength);
}

/** A fresh, aligned copy of a BLOB's bytes (SQLite buffers are not aligned for wider element types). */
function copy(b: Uint8Array): ArrayBuffer {
  const out = new ArrayBuffer(b.byteLength);
  new Uint8Array(out).set(b);
  return out;
}

export const f64 = (b: Uint8Array): Float64Array => new Float64Array(copy(b));
export const u16 = (b: Uint8Array): Uint16Array => new Uint16Array(copy(b));
export const u8 = (b: Uint8Array): Uint8Array => new Uint8Array(copy(b));

/** The only objects fromJson turns back into numbers (no state object has a `$num` key of its own). */
const NON_FINITE = new Set(['NaN', 'Infinity', '-Infinity']);

export function toJson(x: unknown): string {
  return JSON.stringify(x, (_k, v: unknown) => (typeof v === 'number' && !Number.isFinite(v) ? { $num: String(v) } : v));
}

export function fromJson<T>(s: string | Buffer): T {
  return JSON.parse(String(s), (_k, v: unknown) => {
    if (v !== null && typeof v === 'object' && !Array.isArray(v)) {
      const o = v as Record<string, unknown>;
      if (NON_FINITE.has(o.$num as string) && Object.keys(o).length === 1) return Number(o.$num);
    }
    return v;
  }) as T;
}

const MODEL_VERSION = 1;

/** HostModel's fields as bytes: activity, TRW, CUSUM sums and volume-surge state (detect/model.ts). */
export function modelToBytes(m: HostModel): Buffer {
  const n = m.surge?.peak.length ?? 0;
  const c = m.cusum?.length ?? 0;
  const b = Buffer.alloc(40 + 8 * c + n * (4 + 2 + 4 + 4) + 8);
  let o = 0;
  b.writeUInt8(MODEL_VERSION, o); o += 1;
  b.writeInt8(m.trwDecided, o); o += 1;
  b.writeUInt8(c, o); o += 1;
  b.writeUInt8(n, o); o += 1;
  b.writeUInt32LE(m.activeWindows, o); o += 4;
  b.writeDoubleLE(m.lastActiveStart, o); o += 8;
  b.writeDoubleLE(m.trwLog, o); o += 8;
  b.writeDoubleLE(m.firstActiveStart, o); o += 8;
  o += 8; // reserved
  for (let i = 0; i < c; i++, o += 8) b.writeDoubleLE(m.cusum![i]!, o);
  const s = m.surge;
  if (s) {
    for (let i = 0; i < n; i++, o += 4) b.writeFloatLE(s.peak[i]!, o);
    for (let i = 0; i < n; i++, o += 2) b.writeUInt16LE(s.run[i]!, o);
    for (let i = 0; i < n; i++, o += 4) b.writeFloatLE(s.runMax[i]!, o);
    for (let i = 0; i < n; i++, o += 4) b.writeFloatLE(s.last[i]!, o);
    b.writeDoubleLE(s.lastStart, o); o += 8;
  }
  return b.subarray(0, o);
}

/** Inverse of modelToBytes; null when the bytes are not of this format. */
export function modelFromBytes(hostId: number, baselines: Baselines, bytes: Uint8Array): HostModel | null {
  const b = Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  if (b.length < 40 || b.readUInt8(0) !== MODEL_VERSION) return null;
  const c = b.readUInt8(2);
  const n = b.readUInt8(3);
  if (b.length !== 40 + 8 * c + (n > 0 ? n * 14 + 8 : 0)) return null;
  const m = new HostModel(hostId, baselines);
  m.trwDecided = b.readInt8(1) as 0 | 1 | -1;
  m.activeWindows = b.readUInt32LE(4);
  m.lastActiveStart = b.readDoubleLE(8);
  m.trwLog = b.readDoubleLE(16);
  m.firstActiveStart = b.readDoubleLE(24);
  let o = 40;
  if (c > 0) {
    m.cusum = new Float64Array(c);
    for (let i = 0; i < c; i++, o += 8) m.cusum[i] = b.readDoubleLE(o);
  }
  if (n > 0) {
    const s: SurgeState = { peak: new Float32Array(n), run: new Uint16Array(n), runMax: new Float32Array(n), last: new Float32Array(n), lastStart: NaN };
    for (let i = 0; i < n; i++, o += 4) s.peak[i] = b.readFloatLE(o);
    for (let i = 0; i < n; i++, o += 2) s.run[i] = b.readUInt16LE(o);
    for (let i = 0; i < n; i++, o += 4) s.runMax[i] = b.readFloatLE(o);
    for (let i = 0; i < n; i++, o += 4) s.last[i] = b.readFloatLE(o);
    s.lastStart = b.readDoubleLE(o);
    m.surge = s;
  }
  return m;
}

/** One host's slots of a bank, each as u32 length + BaselineBank.slotToBytes. */
export function slotsToBytes(bank: SlotWriter, host: number): Buffer {
  let total = 0;
  for (let f = 0; f < bank.features; f++) total += 4 + bank.slotByteLength(bank.slotOf(host, f));
  // one zeroed buffer per host: a checkpoint of many hosts allocates per host, not per slot
  const b = Buffer.alloc(total);
  const dv = new DataView(b.buffer, b.byteOffset, b.byteLength);
  let o = 0;
  for (let f = 0; f < bank.features; f++) {
    const slot = bank.slotOf(host, f);
    const len = bank.slotByteLength(slot);
    dv.setUint32(o, len, true);
    bank.writeSlot(slot, dv, b, o + 4);
    o += 4 + len;
  }
  return b;
}

/** What slotsToBytes needs of a baseline bank. */
interface SlotWriter {
  features: number;
  slotOf(h: number, f: number): number;
  slotByteLength(slot: number): number;
  writeSlot(slot: number, dv: DataView, b: Uint8Array, off: number): void;
}

/** Inverse of slotsToBytes; false when any slot does not fit (the bank keeps what was restored). */
export function slotsFromBytes(bank: { features: number; slotOf(h: number, f: number): number; slotFromBytes(s: number, b: Uint8Array): boolean }, host: number, bytes: Uint8Array): boolean {
  let o = 0;
  for (let f = 0; f < bank.features; f++) {
    if (o + 4 > bytes.length) return false;
    const len = new DataView(bytes.buffer, bytes.byteOffset + o, 4).getUint32(0, true);
    o += 4;
    if (o + len > bytes.length) return false;
    if (!bank.slotFromBytes(bank.slotOf(host, f), bytes.subarray(o, o + len))) return false;
    o += len;
  }
  return o === bytes.length;
}
