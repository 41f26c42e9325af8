import type { FlowSink } from '../flow/record.js';
import type { InputProblem } from '../util/problem.js';
import { DecodePlan } from './plan.js';
import { ExportSession, TemplateBudget } from './session.js';

/**
 * NetFlow v5 export packets: a 24-octet header (version 5, count, sysUptime, unix_secs, unix_nsecs,
 * flow_sequence, engine_type, engine_id, sampling_interval) and `count` fixed 48-octet records (the
 * v5 layout as Cisco documents it, and as scapy's NetflowHeaderV5 / NetflowRecordV5 build it). There
 * are no templates: the record layout is one fixed decode plan over the IANA element ids of the same
 * fields (v9 and IPFIX kept v5's numbering), so v5 records go through the same decoding, time and
 * outcome rules as v9's.
 */
export const V5_VERSION = 5;
export const V5_HEADER = 24;
export const V5_RECORD = 48;
/** A v5 packet carries 1..30 records (Cisco's limit; a count past it is not a v5 packet). */
export const V5_MAX_COUNT = 30;

// srcaddr, dstaddr, nexthop, input, output, dPkts, dOctets, First, Last, srcport, dstport, pad1,
// tcp_flags, prot, tos, src_as, dst_as, src_mask, dst_mask, pad2 (IANA ids; 210 = paddingOctets)
const V5_IDS = [8, 12, 15, 10, 14, 2, 1, 22, 21, 7, 11, 210, 6, 4, 5, 16, 17, 9, 13, 210];
const V5_LENS = [4, 4, 4, 2, 2, 4, 4, 4, 4, 2, 2, 1, 1, 1, 1, 2, 2, 1, 1, 2];
const V5_PLAN = new DecodePlan(0, new Uint16Array(V5_IDS.length), V5_IDS, V5_LENS, false, 0, new Uint8Array(0));

/** Octets of the v5 packet at `off` per its count, or -1 when the header is not a plausible v5 header. */
export function v5PacketLength(b: Uint8Array, off: number, room: number): number {
  if (room < V5_HEADER || b[off] !== 0 || b[off + 1] !== V5_VERSION) return -1;
  const count = (b[off + 2]! << 8) | b[off + 3]!;
  if (count === 0 || count > V5_MAX_COUNT) return -1;
  return V5_HEADER + count * V5_RECORD;
}

/** NetFlow v5 decoder for one exporter (address and port, or a file). Exporter label: `/engine`, engine_type * 256 + engine_id. */
export class NetflowV5Decoder {
  readonly session: ExportSession;

  constructor(file: string, label: string, sink: FlowSink, budget = new TemplateBudget(), onProblem?: (p: InputProblem) => void) {
    this.session = new ExportSession(file, label, sink, budget, onProblem);
  }

  get counters() { return this.session.counters; }

  /**
   * Decodes the packet at `off` with `room` octets available; returns the octets it used (header +
   * count records), or 0 when the header is unusable (the caller treats that as lost framing).
   */
  decodePacket(b: Uint8Array, off: number, room: number, inputOff: number): number {
    const s = this.session;
    if (room < V5_HEADER) {
      s.problem('truncated', inputOff, `${room} bytes, less than a NetFlow v5 header`);
      return 0;
    }
    const version = (b[off]! << 8) | b[off + 1]!;
    if (version !== V5_VERSION) {
      s.problem('bad-version', inputOff, `NetFlow version ${version}, expected 5`);
      return 0;
    }
    const count = (b[off + 2]! << 8) | b[off + 3]!;
    if (count === 0 || count > V5_MAX_COUNT) {
      s.problem('bad-length', inputOff, `NetFlow v5 record count ${count} outside 1..${V5_MAX_COUNT}`);
      return 0;
    }
    const len = V5_HEADER + count * V5_RECORD;
    if (len > room) {
      s.problem('truncated', inputOff, `NetFlow v5 packet of ${count} records needs ${len} bytes, ${room} left`);
      return 0;
    }
    s.counters.messages++;
    const uptime = readU32(b, off + 4);
    // export time to the millisecond: unix_secs and unix_nsecs
    const exportMs = readU32(b, off + 8) * 1000 + Math.floor(readU32(b, off + 12) / 1e6);
    const seq = readU32(b, off + 16);
    const d = s.domain((b[off + 20]! << 8) | b[off + 21]!, inputOff + 20);
    if (!d) return len;
    // flow_sequence counts flows: the next packet's is this one's plus its count
    if (d.expectedSeq >= 0 && seq !== d.expectedSeq) {
      const gap = (seq - d.expectedSeq) >>> 0;
      if (gap < 0x80000000) s.counters.sequenceLost += gap;
      else s.counters.sequenceResets++;
    }
    d.expectedSeq = (seq + count) >>> 0;
    // sampling_interval: 2 bits of mode (0 = none), 14 bits of interval
    const sampling = (b[off + 22]! << 8) | b[off + 23]!;
    if (sampling >>> 14 !== 0 && (sampling & 0x3fff) > s.counters.samplingInterval) s.counters.samplingInterval = sampling & 0x3fff;
    // First/Last are sysUptime milliseconds: made absolute as v9's are (METHODS.md 3.8)
    s.decodeSet(d, V5_PLAN, b, off + V5_HEADER, off + len, exportMs, uptime, inputOff + V5_HEADER);
    return len;
  }

  finish(): void { this.session.finish(); }
}

function readU32(b: Uint8Array, o: number): number {
  return ((b[o]! << 24) | (b[o + 1]! << 16) | (b[o + 2]! << 8) | b[o + 3]!) >>> 0;
}
