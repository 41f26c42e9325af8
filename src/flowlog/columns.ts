/**
 * Column names of flow-log files (CSV headers, JSON Lines keys): which FlowRecord field each names.
 * Three vocabularies are read: FlowRecord field names, IPFIX Information Element names (IANA
 * registry, RFC 7012), and the plain names flow logs exported by other tools tend to use (`src_ip`,
 * `Dst Port`, `protocol`, `bytes`, `start_time`...; common practice, no source). Names are compared
 * without case and without separators, so `Src IP`, `src_ip`, `srcIp` and `SRC-IP` are one name.
 *
 * A key ending in `~` is a fallback: it counts only when the row has no value under the plain key
 * (running totals behind delta counters, a bare `timestamp` behind a start time).
 */

/** FlowRecord fields (and the helper keys rowToFlow reads) -> the names that stand for them. */
const NAMES: Record<string, readonly string[]> = {
  start: ['start', 'flowStartMilliseconds', 'flowStartSeconds', 'flowStartMicroseconds', 'flowStartNanoseconds',
    'start_time', 'starttime', 'stime', 'first_seen', 'firstseen', 'flow_start', 'time_start', 'begin', 'start_ts'],
  'start~': ['ts', 'timestamp', 'time', 'datetime'],
  end: ['end', 'flowEndMilliseconds', 'flowEndSeconds', 'flowEndMicroseconds', 'flowEndNanoseconds',
    'end_time', 'endtime', 'etime', 'ltime', 'last_seen', 'lastseen', 'flow_end', 'time_end', 'stop', 'end_ts'],
  durationMs: ['flowDurationMilliseconds', 'duration_ms', 'dur_ms'],
  durationUs: ['flowDurationMicroseconds', 'duration_us', 'dur_us'],
  // a bare duration is in seconds (with fractions), as flow logs print it; `flow_duration` is left out,
  // since some tools print it in microseconds
  durationS: ['duration', 'dur', 'td', 'duration_s', 'duration_sec'],
  proto: ['proto', 'protocolIdentifier', 'protocol', 'prot', 'pr', 'ip_proto', 'ip_protocol', 'protocol_id', 'l4_proto'],
  src: ['src', 'sourceIPv4Address', 'sourceIPv6Address', 'src_ip', 'src_addr', 'src_address', 'src_ip_addr',
    'src_ip_address', 'source_ip', 'source_addr', 'source_address', 'source_ip_address', 'saddr', 'sa', 'ip_src',
    'ipv4_src_addr', 'ipv6_src_addr', 'src_ipv4', 'src_ipv6'],
  dst: ['dst', 'destinationIPv4Address', 'destinationIPv6Address', 'dst_ip', 'dst_addr', 'dst_address', 'dst_ip_addr',
    'dst_ip_address', 'dest_ip', 'dest_addr', 'dest_address', 'destination_ip', 'destination_addr',
    'destination_address', 'destination_ip_address', 'daddr', 'da', 'ip_dst', 'ipv4_dst_addr', 'ipv6_dst_addr',
    'dst_ipv4', 'dst_ipv6'],
  sport: ['sport', 'sourceTransportPort', 'src_port', 'source_port', 'sp', 'spt', 'l4_src_port', 'src_pt'],
  dport: ['dport', 'destinationTransportPort', 'dst_port', 'dest_port', 'destination_port', 'dp', 'dpt', 'l4_dst_port', 'dst_pt'],
  pkts: ['pkts', 'packetDeltaCount', 'initiatorPackets', 'packets', 'pkt', 'packet_count', 'in_pkts', 'in_packets', 'ipkt', 'packets_sent', 'sent_packets',
    'fwd_packets', 'total_fwd_packets', 'tot_fwd_pkts'],
  'pkts~': ['packetTotalCount'],
  bytes: ['bytes', 'octetDeltaCount', 'initiatorOctets', 'octets', 'byte_count', 'octet_count', 'in_bytes', 'in_octets', 'ibyt', 'byt', 'bytes_sent', 'sent_bytes',
    'fwd_bytes', 'total_length_of_fwd_packets', 'totlen_fwd_pkts'],
  'bytes~': ['octetTotalCount'],
  rpkts: ['rpkts', 'reversePacketDeltaCount', 'responderPackets', 'reverse_packets', 'rev_packets', 'rev_pkts', 'reverse_pkts',
    'bwd_packets', 'total_backward_packets', 'tot_bwd_pkts'],
  'rpkts~': ['reversePacketTotalCount'],
  rbytes: ['rbytes', 'reverseOctetDeltaCount', 'responderOctets', 'reverse_bytes', 'reverse_octets', 'rev_bytes', 'rev_octets',
    'bwd_bytes', 'total_length_of_bwd_packets', 'totlen_bwd_pkts'],
  'rbytes~': ['reverseOctetTotalCount'],
  flags: ['flags', 'tcpControlBits', 'tcp_flags', 'tcp_flag', 'flg'],
  rflags: ['rflags', 'reverseTcpControlBits', 'reverse_flags', 'rev_flags', 'reverse_tcp_flags'],
  vlan: ['vlan', 'vlanId', 'dot1qVlanId', 'vlan_id'],
  icmpTypeCode: ['icmpTypeCode', 'icmpTypeCodeIPv4', 'icmpTypeCodeIPv6', 'icmp_type_code'],
  outcome: ['outcome'],
  exporter: ['exporter'],
};

/** Lower case, letters and digits only: the form names are compared in. */
function fold(name: string): string {
  return name.toLowerCase().replace(/[^a-z0-9]/g, '');
}

const BY_FOLDED = new Map<string, string>();
for (const [field, names] of Object.entries(NAMES)) {
  for (const n of names) {
    const f = fold(n);
    if (BY_FOLDED.has(f) && BY_FOLDED.get(f) !== field) throw new Error(`flow-log column name ${n} stands for two fields`);
    BY_FOLDED.set(f, field);
  }
}

/** The FlowRecord field a column name stands for; unknown names come back trimmed, and are ignored. */
export function canonicalKey(k: string): string {
  const t = k.trim();
  return BY_FOLDED.get(fold(t)) ?? t;
}

/** A few of the names accepted for each required field, for messages. */
const EXAMPLES = {
  src: 'src, src_ip, sourceIPv4Address', dst: 'dst, dst_ip, destinationIPv4Address',
  proto: 'proto, protocol, protocolIdentifier', start: 'start, timestamp, flowStartMilliseconds',
};

/**
 * Why a header cannot give flows (the required fields it names none of), or null. Required: a source
 * and a destination address, a protocol and a time (start, end or a timestamp).
 */
export function missingColumns(keys: readonly string[]): string | null {
  const has = new Set(keys);
  const missing: string[] = [];
  if (!has.has('src')) missing.push(`a source address (${EXAMPLES.src}, ...)`);
  if (!has.has('dst')) missing.push(`a destination address (${EXAMPLES.dst}, ...)`);
  if (!has.has('proto')) missing.push(`a protocol (${EXAMPLES.proto}, ...)`);
  if (!has.has('start') && !has.has('end') && !has.has('start~')) missing.push(`a time (${EXAMPLES.start}, ...)`);
  return missing.length === 0 ? null : `no column names ${missing.join(', ')}`;
}

/** TCP flag letters and names -> bits (RFC 9293 section 3.1; ECE and CWR, RFC 3168 section 23.2). */
const FLAG_BITS: Record<string, number> = {
  F: 0x01, S: 0x02, R: 0x04, P: 0x08, A: 0x10, U: 0x20, E: 0x40, C: 0x80,
  FIN: 0x01, SYN: 0x02, RST: 0x04, PSH: 0x08, ACK: 0x10, URG: 0x20, ECE: 0x40, CWR: 0x80,
};

/**
 * TCP flags as flow logs write them: a number (decimal, or hex with 0x), letters (`SA`, `.AP.SF`,
 * dots and dashes for flags not set) or names (`SYN,ACK`, `SYN|ACK`, `syn ack`). NaN when unreadable.
 */
export function parseTcpFlags(v: string): number {
  const s = v.trim();
  if (/^\d+$/.test(s)) return Number(s);
  if (/^0x[0-9a-f]+$/i.test(s)) return parseInt(s.slice(2), 16);
  const up = s.toUpperCase();
  const words = up.split(/[\s,|+/]+/).filter((w) => w !== '');
  // names when there are several, or one that is a flag's name (ECE is a name, not E, C and E)
  if (words.length > 1 || (words.length === 1 && words[0]!.length === 3 && FLAG_BITS[words[0]!] !== undefined)) {
    let bits = 0;
    for (const w of words) {
      const b = w.length === 3 ? FLAG_BITS[w] : undefined;
      if (b === undefined) return NaN;
      bits |= b;
    }
    return bits;
  }
  let bits = 0;
  for (const ch of up) {
    if (ch === '.' || ch === '-' || ch === '*') continue;
    const b = FLAG_BITS[ch];
    if (b === undefined) return NaN;
    bits |= b;
  }
  return bits;
}
