import type { FlowSink } from '../flow/record.js';
import type { InputProblem } from '../util/problem.js';
import { DecodePlan } from './plan.js';
import { ExportSession, TemplateBudget, type Domain } from './session.js';

/** RFC 7011 section 3.1: Version 10, 16-octet message header; 4-octet set and template headers. */
export const IPFIX_VERSION = 10;
export const IPFIX_HEADER = 16;
const SET_HEADER = 4;
const TEMPLATE_SET = 2;
const OPTIONS_TEMPLATE_SET = 3;
const MIN_DATA_SET = 256;

// Field specifiers of the template being parsed; a template has at most 65535 fields.
const specPen = new Uint32Array(65_536);
const specId = new Uint16Array(65_536);
const specLen = new Uint16Array(65_536);

/**
 * IPFIX decoder for one transport session (an exporter's address and port, a TCP connection, or a
 * file): templates are scoped to (this session, Observation Domain, Template ID) per RFC 7011 section 8.
 */
export class IpfixDecoder {
  readonly session: ExportSession;

  constructor(file: string, label: string, sink: FlowSink, budget = new TemplateBudget(), onProblem?: (p: InputProblem) => void) {
    this.session = new ExportSession(file, label, sink, budget, onProblem);
  }

  get counters() { return this.session.counters; }

  /**
   * Decodes one message starting at `off`; `room` is how many bytes the datagram, file or stream has
   * from `off`. Returns the message length consumed (>= 16), or 0 when the header is unusable (bad
   * version or length), which the caller treats as lost framing. `inputOff` is `off`'s position in
   * the input, for problem reports.
   */
  decodeMessage(b: Uint8Array, off: number, room: number, inputOff: number): number {
    const s = this.session;
    if (room < IPFIX_HEADER) {
      s.problem('truncated', inputOff, `${room} bytes left, less than an IPFIX message header`);
      return 0;
    }
    const version = (b[off]! << 8) | b[off + 1]!;
    const len = (b[off + 2]! << 8) | b[off + 3]!;
    if (version !== IPFIX_VERSION) {
      s.problem('bad-version', inputOff, `IPFIX message version ${version}, expected 10`);
      return 0;
    }
    if (len < IPFIX_HEADER || len > room) {
      s.problem('bad-length', inputOff, `IPFIX message length ${len} outside 16..${room}`);
      return 0;
    }
    s.counters.messages++;
    const exportMs = readU32(b, off + 4) * 1000;
    const seq = readU32(b, off + 8);
    const d = s.domain(readU32(b, off + 12), inputOff + 12);
    if (!d) return len;

    this.checkSequence(d, seq);
    const end = off + len;
    let p = off + IPFIX_HEADER, dataRecords = 0, countable = true;
    while (p + SET_HEADER <= end) {
      const setId = (b[p]! << 8) | b[p + 1]!;
      const setLen = (b[p + 2]! << 8) | b[p + 3]!;
      const at = inputOff + (p - off);
      if (setLen < SET_HEADER) {
        s.problem('bad-set-length', at, `set length ${setLen} is less than its 4-octet header; rest of message skipped`);
        countable = false;
        break;
      }
      if (p + setLen > end) {
        s.problem('set-overrun', at, `set ${setId} of length ${setLen} runs past the message end (${end - p} bytes left); rest of message skipped`);
        countable = false;
        break;
      }
      const body = p + SET_HEADER, setEnd = p + setLen;
      if (setId === TEMPLATE_SET || setId === OPTIONS_TEMPLATE_SET) {
        this.templateSet(d, b, body, setEnd, setId === OPTIONS_TEMPLATE_SET, inputOff + (body - off));
      } else if (setId >= MIN_DATA_SET) {
        const plan = d.templates.get(setId);
        if (plan) dataRecords += s.decodeSet(d, plan, b, body, setEnd, exportMs, -1, inputOff + (body - off));
        else { countable = false; s.hold(d, setId, b, body, setEnd, exportMs, -1, at); }
      } else {
        s.problem('bad-set-id', at, `set id ${setId} is reserved (RFC 7011 section 3.3.2); set skipped`);
      }
      p = setEnd;
    }
    if (p < end && countable) s.problem('trailing-bytes', inputOff + (p - off), `${end - p} bytes after the last set`);
    // RFC 7011 section 3.1 with erratum 4396: the next message's sequence = this one's + data records here
    d.expectedSeq = countable ? (seq + dataRecords) >>> 0 : -1;
    return len;
  }

  /** Per-domain loss from sequence numbers (METHODS.md 3.5; check value 19). */
  private checkSequence(d: Domain, seq: number): void {
    if (d.expectedSeq >= 0 && seq !== d.expectedSeq) {
      const gap = (seq - d.expectedSeq) >>> 0;
      if (gap < 0x80000000) this.session.counters.sequenceLost += gap;
      else this.session.counters.sequenceResets++;
    }
  }

  /** Template Set or Options Template Set body (RFC 7011 sections 3.4.1, 3.4.2). */
  private templateSet(d: Domain, b: Uint8Array, off: number, end: number, options: boolean, inputOff: number): void {
    const s = this.session;
    const header = options ? 6 : 4;
    let p = off, overCap = 0, firstOverCap = -1;
    while (p + 4 <= end) {
      const at = inputOff + (p - off);
      const tid = (b[p]! << 8) | b[p + 1]!;
      const count = (b[p + 2]! << 8) | b[p + 3]!;
      if (count === 0) {
        if (tid === 0) break; // padding
        // withdrawal (RFC 7011 section 8.1): id 2 / 3 withdraws all (options) templates of the domain
        if (tid === (options ? OPTIONS_TEMPLATE_SET : TEMPLATE_SET)) s.withdrawAll(d, options);
        else if (tid < MIN_DATA_SET || !s.withdraw(d, tid)) s.problem('withdraw-unknown', at, `withdrawal of unknown template ${tid}`);
        p += 4;
        continue;
      }
      if (tid < MIN_DATA_SET) {
        s.problem('bad-template', at, `template id ${tid} is below 256; rest of template set skipped`);
        return;
      }
      if (p + header > end) break;
      const scope = options ? (b[p + 4]! << 8) | b[p + 5]! : 0;
      if (options && (scope === 0 || scope > count)) {
        s.problem('bad-template', at, `options template ${tid}: scope field count ${scope} not in 1..${count}; rest of set skipped`);
        return;
      }
      let q = p + header, i = 0;
      for (; i < count && q + 4 <= end; i++) {
        const raw = (b[q]! << 8) | b[q + 1]!;
        specLen[i] = (b[q + 2]! << 8) | b[q + 3]!;
        q += 4;
        if (raw & 0x8000) {
          if (q + 4 > end) break;
          specPen[i] = readU32(b, q);
          q += 4;
        } else specPen[i] = 0;
        specId[i] = raw & 0x7fff;
      }
      if (i < count) {
        s.problem('template-overrun', at, `template ${tid} declares ${count} fields but its set ends after ${i}; rest of set skipped`);
        return;
      }
      const old = d.templates.get(tid);
      if (old && old.isOptions === options && old.sameDefinition(b.subarray(p, q))) { p = q; continue; } // a refresh
      const plan = new DecodePlan(tid, specPen.subarray(0, count), specId.subarray(0, count), specLen.subarray(0, count),
        options, scope, b.slice(p, q));
      if (plan.minLen === 0) s.problem('bad-template', at, `template ${tid} describes zero-length records; ignored`);
      else if (s.install(d, plan) === 'over-cap' && overCap++ === 0) firstOverCap = at;
      p = q;
    }
    if (overCap > 0) s.problem('template-cap', firstOverCap, `${overCap} templates over the template cap ignored`, false, overCap);
  }

  /** End of input: data sets still waiting for templates are dropped and reported. */
  finish(): void { this.session.finish(); }
}

function readU32(b: Uint8Array, o: number): number {
  return ((b[o]! << 24) | (b[o + 1]! << 16) | (b[o + 2]! << 8) | b[o + 3]!) >>> 0;
}
