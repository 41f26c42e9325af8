import type { FlowRecord } from '../flow/record.js';
import type { AddressTexts } from './addr-cache.js';
import { exportedOutcome } from './outcome.js';
import type { DecodePlan } from './plan.js';
import type { RecordScratch } from './record-decode.js';

/** What the message around a record says about time. */
export interface TimeContext {
  /** IPFIX Export Time, or NetFlow v9 unix_secs, in epoch ms. */
  exportMs: number;
  /** NetFlow v9 header sysUpTime (ms); -1 for IPFIX. */
  v9UptimeMs: number;
  /** systemInitTimeMilliseconds learned from the domain's options records; NaN when unknown. */
  sysInitMs: number;
}

/** biflowDirection 2 = reverseInitiator: the record's "source" is the responder (RFC 5103; METHODS 3.6). */
const REVERSE_INITIATOR = 2;
/** firewallEvent 1 = flow created, 3 = flow denied (IANA "IPFIX Information Elements", firewallEvent values). */
const FLOW_CREATED = 1, FLOW_DENIED = 3;

/**
 * One side's time by precedence (METHODS.md 3.6): milliseconds > micro/nanoseconds > seconds >
 * microseconds before the export time (158/159) > SysUpTime-relative (v9 header, or
 * systemInitTimeMilliseconds). NaN when the record has none.
 */
function sideTime(ms: number, ntpMs: number, sec: number, deltaUs: number, up: number, s: RecordScratch, ctx: TimeContext): number {
  if (ms === ms) return ms;
  if (ntpMs === ntpMs) return ntpMs;
  if (sec === sec) return sec * 1000;
  if (deltaUs >= 0) return ctx.exportMs - deltaUs / 1000;
  if (up < 0) return NaN;
  // v9: start = unix_secs*1000 - (sysUpTime - FIRST_SWITCHED) mod 2^32 (METHODS 3.8, check value 20)
  if (ctx.v9UptimeMs >= 0) return ctx.exportMs - ((ctx.v9UptimeMs - up) >>> 0);
  const init = s.sysInitMs === s.sysInitMs ? s.sysInitMs : ctx.sysInitMs;
  return init === init ? init + up : NaN;
}

/**
 * Turns a decoded data record into a FlowRecord; null when it names no source or destination
 * address (such records describe something other than a flow). When the record carries no flow time
 * at all, its observation time (322-325), else the message's export time, stands for both ends.
 */
export function toFlowRecord(
  s: RecordScratch, plan: DecodePlan, ctx: TimeContext, b: Uint8Array, texts: AddressTexts, exporter: string,
): FlowRecord | null {
  if (s.srcFamily === 0 || s.dstFamily === 0) return null;
  let start = sideTime(s.startMs, s.startNtpMs, s.startSec, s.startDeltaUs, s.startUp, s, ctx);
  let end = sideTime(s.endMs, s.endNtpMs, s.endSec, s.endDeltaUs, s.endUp, s, ctx);
  // a duration (161/162) gives the side that is missing
  const dur = s.durationMs;
  if (dur === dur) {
    if (start === start && end !== end) end = start + dur;
    else if (end === end && start !== start) start = end - dur;
  }
  if (start !== start) start = end === end ? end : s.obsMs === s.obsMs ? s.obsMs : ctx.exportMs;
  if (end !== end) end = start;

  let src = s.srcFamily === 4 ? texts.v4(s.src4) : texts.v6(b, s.src6);
  let dst = s.dstFamily === 4 ? texts.v4(s.dst4) : texts.v6(b, s.dst6);
  const proto = s.proto;
  let sport = s.sport, dport = s.dport;
  if (proto === 1 || proto === 58) {
    // ICMP: sport 0, dport = type*256 + code (src/flow/record.ts)
    sport = 0;
    if (s.icmpTypeCode >= 0) dport = s.icmpTypeCode;
    else if (s.icmpType >= 0) dport = s.icmpType * 256 + (s.icmpCode >= 0 ? s.icmpCode : 0);
  }
  let pkts = s.packets, bytes = s.octets, rpkts = s.rPackets, rbytes = s.rOctets;
  let flags = s.flags, rflags = s.rflags;
  let hasFlags = plan.hasFlags, hasRevFlags = plan.hasRevFlags;
  if (s.biflowDirection === REVERSE_INITIATOR && plan.biflow) {
    const a = src; src = dst; dst = a;
    if (proto !== 1 && proto !== 58) { const p = sport; sport = dport; dport = p; }
    let t = pkts; pkts = rpkts; rpkts = t;
    t = bytes; bytes = rbytes; rbytes = t;
    t = flags; flags = rflags; rflags = t;
    const h = hasFlags; hasFlags = hasRevFlags; hasRevFlags = h;
  }
  // a firewall's denial is a refusal whatever the counters say; its "created" event comes before
  // anything could come back (the flow's later deleted or update event tells)
  const outcome = s.firewallEvent === FLOW_DENIED ? 'rejected' : s.firewallEvent === FLOW_CREATED ? 'partial'
    : exportedOutcome(proto, flags, rflags, rpkts + rbytes, plan.biflow, hasFlags, hasRevFlags);
  const rec: FlowRecord = {
    start, end, proto, src, dst, sport, dport, pkts, bytes, rpkts, rbytes, flags, rflags, outcome, exporter,
  };
  if (s.vlan >= 0) rec.vlan = s.vlan;
  return rec;
}
