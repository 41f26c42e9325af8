import type { FlowSink } from '../flow/record.js';
import type { InputProblem } from '../util/problem.js';
import { VARLEN } from './elements.js';
import { DecodePlan } from './plan.js';
import { ExportSession, TemplateBudget, type Domain } from './session.js';

/** RFC 3954 section 5.1: version 9, 20-octet header; FlowSet ids 0 (templates), 1 (options), >= 256 data. */
export const V9_VERSION = 9;
export const V9_HEADER = 20;
const FLOWSET_HEADER = 4;
const TEMPLATE_FLOWSET = 0;
const OPTIONS_FLOWSET = 1;
const MIN_DATA_FLOWSET = 256;
/** The largest export packet we accept when walking a file (a UDP datagram's payload limit). */
export const V9_MAX_PACKET = 65_535;

const specPen = new Uint32Array(65_536); // v9 has no enterprise fields: stays 0
const specId = new Uint16Array(65_536);
const specLen = new Uint16Array(65_536);

/**
 * Where the export packet starting at `off` ends: v9 has no length field, so walk the FlowSets until
 * the next header (FlowSet id 9 is reserved, so 00 09 at a FlowSet boundary is the next version field),
 * any other reserved id (not a FlowSet boundary: the framer resynchronises there), or the end. Returns -1 when more bytes are needed (and `atEof` is false).
 */
export function v9PacketEnd(b: Uint8Array, off: number, avail: number, atEof: boolean): number {
  let p = off + V9_HEADER;
  if (p > avail) return atEof ? avail : -1;
  while (p - off < V9_MAX_PACKET) {
    if (p + FLOWSET_HEADER > avail) return atEof ? avail : -1;
    const id = (b[p]! << 8) | b[p + 1]!;
    // 9 is the next header's version; other reserved ids (2..255) mean we are not at a FlowSet boundary
    if (id === V9_VERSION || (id > OPTIONS_FLOWSET && id < MIN_DATA_FLOWSET)) return p;
    const len = (b[p + 2]! << 8) | b[p + 3]!;
    if (len < FLOWSET_HEADER) return p;
    if (p + len > avail) return atEof ? avail : -1;
    p += len;
  }
  return Math.min(p, off + V9_MAX_PACKET);
}

/** NetFlow v9 decoder for one transport session (exporter address and port, or a file). */
export class NetflowV9Decoder {
  readonly session: ExportSession;

  constructor(file: string, label: string, sink: FlowSink, budget = new TemplateBudget(), onProblem?: (p: InputProblem) => void) {
    this.session = new ExportSession(file, label, sink, budget, onProblem);
  }

  get counters() { return this.session.counters; }

  /** Decodes one export packet occupying `off`..`end`. `inputOff` is `off`'s position in the input. */
  decodePacket(b: Uint8Array, off: number, end: number, inputOff: number): void {
    const s = this.session;
    if (end - off < V9_HEADER) {
      s.problem('truncated', inputOff, `${end - off} bytes, less than a NetFlow v9 header`);
      return;
    }
    const version = (b[off]! << 8) | b[off + 1]!;
    if (version !== V9_VERSION) {
      s.problem('bad-version', inputOff, `NetFlow version ${version}, expected 9`);
      return;
    }
    s.counters.messages++;
    const uptime = readU32(b, off + 4);
    const unixMs = readU32(b, off + 8) * 1000;
    const seq = readU32(b, off + 12);
    const d = s.domain(readU32(b, off + 16), inputOff + 16);
    if (!d) return;
    // RFC 3954 section 5.1: the sequence counts export packets per Source ID (METHODS.md 3.5)
    if (d.expectedSeq >= 0 && seq !== d.expectedSeq) {
      const gap = (seq - d.expectedSeq) >>> 0;
      if (gap < 0x80000000) s.counters.sequenceLost += gap;
      else s.counters.sequenceResets++;
    }
    d.expectedSeq = (seq + 1) >>> 0;

    let p = off + V9_HEADER;
    while (p + FLOWSET_HEADER <= end) {
      const id = (b[p]! << 8) | b[p + 1]!;
      const len = (b[p + 2]! << 8) | b[p + 3]!;
      const at = inputOff + (p - off);
      if (len < FLOWSET_HEADER) {
        s.problem('bad-set-length', at, `FlowSet length ${len} is less than its 4-octet header; rest of packet skipped`);
        return;
      }
      if (p + len > end) {
        s.problem('set-overrun', at, `FlowSet ${id} of length ${len} runs past the packet end (${end - p} bytes left); rest of packet skipped`);
        return;
      }
      const body = p + FLOWSET_HEADER, setEnd = p + len, bodyAt = inputOff + (body - off);
      if (id === TEMPLATE_FLOWSET) this.templates(d, b, body, setEnd, bodyAt);
      else if (id === OPTIONS_FLOWSET) this.optionsTemplates(d, b, body, setEnd, bodyAt);
      else if (id >= MIN_DATA_FLOWSET) {
        const plan = d.templates.get(id);
        if (plan) s.decodeSet(d, plan, b, body, setEnd, unixMs, uptime, bodyAt);
        else s.hold(d, id, b, body, setEnd, unixMs, uptime, at);
      } else s.problem('bad-set-id', at, `FlowSet id ${id} is reserved (RFC 3954 section 5.2); skipped`);
      p = setEnd;
    }
  }

  /** Template FlowSet (RFC 3954 section 5.2): template id, field count, (type, length) pairs. */
  private templates(d: Domain, b: Uint8Array, off: number, end: number, inputOff: number): void {
    let p = off;
    while (p + 4 <= end) {
      const tid = (b[p]! << 8) | b[p + 1]!;
      const count = (b[p + 2]! << 8) | b[p + 3]!;
      if (tid === 0 && count === 0) break; // padding
      const at = inputOff + (p - off);
      if (tid < MIN_DATA_FLOWSET || count === 0) {
        this.session.problem('bad-template', at, `template id ${tid} with ${count} fields is not valid; rest of FlowSet skipped`);
        return;
      }
      const q = this.fields(b, p + 4, end, count);
      if (q < 0) {
        this.session.problem('template-overrun', at, `template ${tid} declares ${count} fields past its FlowSet end; rest skipped`);
        return;
      }
      this.add(d, tid, count, 0, b, p, q, at);
      p = q;
    }
  }

  /**
   * Options Template FlowSet (RFC 3954 section 6.1): template id, option scope length and option
   * length in octets (4 per field), scope fields, option fields, padding to 32 bits.
   */
  private optionsTemplates(d: Domain, b: Uint8Array, off: number, end: number, inputOff: number): void {
    let p = off;
    while (p + 6 <= end) {
      const tid = (b[p]! << 8) | b[p + 1]!;
      if (tid === 0) break; // padding
      const scopeLen = (b[p + 2]! << 8) | b[p + 3]!;
      const optLen = (b[p + 4]! << 8) | b[p + 5]!;
      const at = inputOff + (p - off);
      const scope = scopeLen >>> 2, count = scope + (optLen >>> 2);
      if (tid < MIN_DATA_FLOWSET || (scopeLen & 3) !== 0 || (optLen & 3) !== 0 || count === 0) {
        this.session.problem('bad-template', at, `options template ${tid} with scope length ${scopeLen} and option length ${optLen} is not valid; skipped`);
        return;
      }
      const q = this.fields(b, p + 6, end, count);
      if (q < 0) {
        this.session.problem('template-overrun', at, `options template ${tid} runs past its FlowSet end; skipped`);
        return;
      }
      this.add(d, tid, count, scope, b, p, q, at);
      p = q; // zero padding that follows reads as template id 0 and ends the loop
    }
  }

  /** Reads `count` (type, length) pairs from `p` into the spec arrays; returns the end, or -1. */
  private fields(b: Uint8Array, p: number, end: number, count: number): number {
    if (p + 4 * count > end) return -1;
    for (let i = 0; i < count; i++, p += 4) {
      specPen[i] = 0;
      specId[i] = (b[p]! << 8) | b[p + 1]!;
      specLen[i] = (b[p + 2]! << 8) | b[p + 3]!;
    }
    return p;
  }

  private add(d: Domain, tid: number, count: number, scope: number, b: Uint8Array, from: number, to: number, at: number): void {
    const s = this.session;
    for (let i = 0; i < count; i++) {
      if (specLen[i] === VARLEN) {
        s.problem('bad-template', at, `template ${tid}: v9 has no variable-length fields (length 65535); skipped`);
        return;
      }
    }
    const old = d.templates.get(tid);
    if (old && old.isOptions === scope > 0 && old.sameDefinition(b.subarray(from, to))) return; // a refresh
    const plan = new DecodePlan(tid, specPen.subarray(0, count), specId.subarray(0, count), specLen.subarray(0, count),
      scope > 0, scope, b.slice(from, to));
    if (plan.minLen === 0) s.problem('bad-template', at, `template ${tid} describes zero-length records; ignored`);
    else if (s.install(d, plan) === 'over-cap') s.problem('template-cap', at, `template ${tid} over the template cap; ignored`);
  }

  finish(): void { this.session.finish(); }
}

function readU32(b: Uint8Array, o: number): number {
  return ((b[o]! << 24) | (b[o + 1]! << 16) | (b[o + 2]! << 8) | b[o + 3]!) >>> 0;
}
