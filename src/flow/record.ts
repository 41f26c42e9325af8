/**
 * FlowRecord: the internal contract between ingest (capture/ + decode/ + flow/, or flowlog/) and window/.
 * Field set and order follow shared DESIGN.md section 3; `flows` prints them in this order.
 *
 * Conventions (ours, documented in docs/architecture.md):
 * - `start`/`end` are event time in epoch milliseconds (fractional allowed).
 * - `src` is the initiator (SYN sender for TCP, otherwise first packet's sender), `dst` the responder.
 *   IPv4 dotted quad; IPv6 in RFC 5952 form; IPv4-mapped IPv6 is normalised to IPv4.
 * - `bytes`/`rbytes` are IP-layer octets (IPv4 total length, IPv6 payload length + 40), as IPFIX
 *   octetDeltaCount counts them, never the captured length.
 * - ICMP/ICMPv6: `sport` = 0, `dport` = type * 256 + code (as exporters carry icmpTypeCode).
 *   Echo replies are folded into their request's flow (dport of the request type).
 *   ICMP error messages form their own flow (error sender -> original sender); the flow an unreachable
 *   quotes gets `outcome` = `rejected`, the one a time exceeded quotes (a probe that expired on the way,
 *   as traceroute sends) `partial`, unless it was answered.
 * - `outcome`, TCP: `established` (SYN, SYN-ACK back, then ACK or data from the initiator; a plain ACK
 *   after the SYN implies the SYN-ACK when the capture missed it),
 *   `rejected` (SYN answered by RST, or an ICMP unreachable quoting it), `unanswered` (SYN(s) with nothing
 *   back), `partial` (first packet seen was not a SYN, or SYN and SYN-ACK with no completion yet).
 *   UDP and other protocols: `established` when both directions carried packets, `rejected` after an
 *   ICMP unreachable quoting it, `unanswered` when only the initiator sent. ICMP echo requests (their
 *   flow holds the replies) as UDP: `established` when answered, `rejected` by an unreachable quoting
 *   them, `partial` by a time exceeded, else `unanswered`; other ICMP flows: `n/a`.
 * - `exporter`: for captures the input's base name (`stdin` for `-`); for flow exports the exporter
 *   address (`ADDR:PORT` on the network) or the file's base name, with `/ODID` for IPFIX/v9 domains.
 * - `vlan`: outermost 802.1Q VID when known, otherwise absent.
 */
export type Outcome = 'established' | 'rejected' | 'unanswered' | 'partial' | 'n/a';

export const OUTCOMES: readonly Outcome[] = ['established', 'rejected', 'unanswered', 'partial', 'n/a'];

export interface FlowRecord {
  start: number;
  end: number;
  proto: number;
  src: string;
  dst: string;
  sport: number;
  dport: number;
  pkts: number;
  bytes: number;
  rpkts: number;
  rbytes: number;
  flags: number;
  rflags: number;
  outcome: Outcome;
  exporter: string;
  vlan?: number;
}

/** Field names in contract order; the CSV header of `tidewatch flows --format csv`. */
export const FLOW_FIELDS = [
  'start', 'end', 'proto', 'src', 'dst', 'sport', 'dport', 'pkts', 'bytes', 'rpkts', 'rbytes',
  'flags', 'rflags', 'outcome', 'exporter', 'vlan',
] as const satisfies readonly (keyof FlowRecord)[];

/** Receives records as ingest produces them. */
export type FlowSink = (rec: FlowRecord) => void;
