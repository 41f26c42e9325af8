import { Kind, VARLEN } from './elements.js';
import type { DecodePlan } from './plan.js';

/** Seconds from the NTP era (1900-01-01) to the Unix epoch (RFC 7011 section 6.1.9; METHODS.md 3.4). */
const NTP_UNIX_OFFSET_S = 2_208_988_800;
const TWO32 = 4294967296;

/**
 * The fields of one data record, as numbers. One instance per decoder, reset for each record, so
 * decoding allocates nothing; addresses of IPv6 fields are kept as offsets into the message buffer,
 * valid until the record is turned into a FlowRecord.
 */
export class RecordScratch {
  octets = 0; packets = 0; rOctets = 0; rPackets = 0;
  proto = 0; flags = 0; rflags = 0;
  sport = 0; dport = 0;
  icmpTypeCode = -1; icmpType = -1; icmpCode = -1;
  vlan = -1;
  /** 0 = absent, 4 = IPv4 (src4/dst4), 6 = IPv6 (src6/dst6 offsets into the buffer). */
  srcFamily = 0; dstFamily = 0;
  src4 = 0; dst4 = 0; src6 = 0; dst6 = 0;
  startMs = NaN; endMs = NaN;
  startNtpMs = NaN; endNtpMs = NaN;
  startSec = NaN; endSec = NaN;
  startUp = -1; endUp = -1;
  sysInitMs = NaN;
  biflowDirection = 0;
  /** observationTime* (322-325) as epoch ms; NaN when absent. */
  obsMs = NaN;
  /** Which observation time filled obsMs: 0 milliseconds, 1 micro/nanoseconds, 2 seconds, 3 none. */
  obsRank = 3;
  /** firewallEvent (233); 0 when absent. */
  firewallEvent = 0;
  /** flowStart/EndDeltaMicroseconds (158/159), microseconds before the export time; -1 when absent. */
  startDeltaUs = -1; endDeltaUs = -1;
  /** flowDurationMilliseconds / Microseconds (161/162) in ms; NaN when absent. */
  durationMs = NaN;
  /** 1-in-N packet sampling the record (or options record) announces (34, 50, 305); 0 when absent. */
  samplingInterval = 0;

  reset(): void {
    this.octets = 0; this.packets = 0; this.rOctets = 0; this.rPackets = 0;
    this.proto = 0; this.flags = 0; this.rflags = 0;
    this.sport = 0; this.dport = 0;
    this.icmpTypeCode = -1; this.icmpType = -1; this.icmpCode = -1;
    this.vlan = -1;
    this.srcFamily = 0; this.dstFamily = 0;
    this.startMs = NaN; this.endMs = NaN;
    this.startNtpMs = NaN; this.endNtpMs = NaN;
    this.startSec = NaN; this.endSec = NaN;
    this.startUp = -1; this.endUp = -1;
    this.sysInitMs = NaN;
    this.biflowDirection = 0;
    this.obsMs = NaN;
    this.obsRank = 3;
    this.firewallEvent = 0;
    this.startDeltaUs = -1; this.endDeltaUs = -1;
    this.durationMs = NaN;
    this.samplingInterval = 0;
  }
}

/** Unsigned big-endian integer of 1..8 octets (reduced-size encoding, RFC 7011 section 6.2). */
export function readUint(b: Uint8Array, off: number, len: number): number {
  if (len <= 4) {
    let v = 0;
    for (let i = 0; i < len; i++) v = v * 256 + b[off + i]!;
    return v;
  }
  let hi = 0;
  const hiLen = len - 4;
  for (let i = 0; i < hiLen; i++) hi = hi * 256 + b[off + i]!;
  const o = off + hiLen;
  const lo = ((b[o]! << 24) | (b[o + 1]! << 16) | (b[o + 2]! << 8) | b[o + 3]!) >>> 0;
  return hi * TWO32 + lo;
}

/** NTP 64-bit timestamp (dateTimeMicroseconds/Nanoseconds) as epoch milliseconds. */
function ntpToMs(b: Uint8Array, off: number): number {
  const sec = readUint(b, off, 4);
  const frac = readUint(b, off + 4, 4);
  return (sec - NTP_UNIX_OFFSET_S) * 1000 + (frac / TWO32) * 1000;
}

/**
 * Decodes one data record at `off` (record must end by `end`) into `s`. Returns the offset after the
 * record, or -1 when a variable-length field runs past `end` (RFC 7011 section 7).
 */
export function decodeRecord(plan: DecodePlan, b: Uint8Array, off: number, end: number, s: RecordScratch): number {
  s.reset();
  const kinds = plan.kinds, lens = plan.lens, n = kinds.length;
  let p = off;
  for (let i = 0; i < n; i++) {
    let len = lens[i]!;
    if (len === VARLEN) {
      if (p >= end) return -1;
      len = b[p++]!;
      if (len === 255) {
        if (p + 2 > end) return -1;
        len = (b[p]! << 8) | b[p + 1]!;
        p += 2;
      }
    }
    if (p + len > end) return -1;
    switch (kinds[i]) {
      case Kind.Skip: break;
      case Kind.Octets: s.octets = readUint(b, p, len); break;
      case Kind.Packets: s.packets = readUint(b, p, len); break;
      case Kind.Proto: s.proto = b[p + len - 1]!; break;
      case Kind.Flags: s.flags = b[p + len - 1]!; break; // the TCP flag octet is the low 8 bits
      case Kind.Sport: s.sport = readUint(b, p, len); break;
      case Kind.Dport: s.dport = readUint(b, p, len); break;
      case Kind.Src4: s.srcFamily = 4; s.src4 = readUint(b, p, 4); break;
      case Kind.Dst4: s.dstFamily = 4; s.dst4 = readUint(b, p, 4); break;
      case Kind.Src6: s.srcFamily = 6; s.src6 = p; break;
      case Kind.Dst6: s.dstFamily = 6; s.dst6 = p; break;
      case Kind.EndSysUp: s.endUp = readUint(b, p, len); break;
      case Kind.StartSysUp: s.startUp = readUint(b, p, len); break;
      case Kind.IcmpTypeCode: s.icmpTypeCode = readUint(b, p, len); break;
      case Kind.IcmpType: s.icmpType = b[p + len - 1]!; break;
      case Kind.IcmpCode: s.icmpCode = b[p + len - 1]!; break;
      case Kind.Vlan: s.vlan = readUint(b, p, len) & 0xfff; break;
      case Kind.StartSec: s.startSec = readUint(b, p, len); break;
      case Kind.EndSec: s.endSec = readUint(b, p, len); break;
      case Kind.StartMs: s.startMs = readUint(b, p, len); break;
      case Kind.EndMs: s.endMs = readUint(b, p, len); break;
      case Kind.StartNtp: s.startNtpMs = ntpToMs(b, p); break;
      case Kind.EndNtp: s.endNtpMs = ntpToMs(b, p); break;
      case Kind.SysInitMs: s.sysInitMs = readUint(b, p, len); break;
      case Kind.RevOctets: s.rOctets = readUint(b, p, len); break;
      case Kind.RevPackets: s.rPackets = readUint(b, p, len); break;
      case Kind.RevFlags: s.rflags = b[p + len - 1]!; break;
      case Kind.BiflowDirection: s.biflowDirection = b[p + len - 1]!; break;
      // the same precedence as the flow times: milliseconds > micro/nanoseconds > seconds
      case Kind.ObsMs: s.obsMs = readUint(b, p, len); s.obsRank = 0; break;
      case Kind.ObsNtp: if (s.obsRank > 1) { s.obsMs = ntpToMs(b, p); s.obsRank = 1; } break;
      case Kind.ObsSec: if (s.obsRank > 2) { s.obsMs = readUint(b, p, len) * 1000; s.obsRank = 2; } break;
      case Kind.FirewallEvent: s.firewallEvent = b[p + len - 1]!; break;
      case Kind.StartDeltaUs: s.startDeltaUs = readUint(b, p, len); break;
      case Kind.EndDeltaUs: s.endDeltaUs = readUint(b, p, len); break;
      case Kind.DurationMs: s.durationMs = readUint(b, p, len); break;
      case Kind.DurationUs: if (s.durationMs !== s.durationMs) s.durationMs = readUint(b, p, len) / 1000; break;
      case Kind.SamplingInterval: s.samplingInterval = readUint(b, p, len); break;
    }
    p += len;
  }
  return p;
}
