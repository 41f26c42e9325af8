/**
 * Information Elements the flow-export decoders map into FlowRecord (IANA "IPFIX Information
 * Elements", RFC 7012; METHODS.md 3.6, 3.7). Each becomes one field kind of a decode plan; everything
 * else is skipped by its length.
 */

/** Private Enterprise Number of the RFC 5103 reverse elements (METHODS.md 3.7, check value 22). */
export const REVERSE_PEN = 29305;

/** Field kinds: what a decode plan does with one field's bytes. */
export enum Kind {
  Skip = 0,
  Octets, Packets, Proto, Flags, Sport, Dport,
  Src4, Dst4, Src6, Dst6,
  EndSysUp, StartSysUp, IcmpTypeCode, IcmpType, IcmpCode, Vlan,
  StartSec, EndSec, StartMs, EndMs, StartNtp, EndNtp, SysInitMs,
  RevOctets, RevPackets, RevFlags, BiflowDirection,
  ObsSec, ObsMs, ObsNtp, FirewallEvent,
  StartDeltaUs, EndDeltaUs, DurationMs, DurationUs, SamplingInterval,
}

/** What a field needs from its length to be read as its kind. */
const enum Shape { Uint, Ipv4, Ipv6, Ntp }

/**
 * `rank` orders elements that fill the same FlowRecord field (lower wins when a template carries
 * several): delta counters before initiator/responder counters before running totals; vlanId before
 * dot1qVlanId.
 */
interface Element { kind: Kind; shape: Shape; rank?: number }

const U = Shape.Uint;
/** IANA element id -> kind, for enterprise 0 (ids 1-127 also serve NetFlow v9 field types). */
const IANA = new Map<number, Element>([
  [1, { kind: Kind.Octets, shape: U }],          // octetDeltaCount
  [2, { kind: Kind.Packets, shape: U }],         // packetDeltaCount
  [85, { kind: Kind.Octets, shape: U, rank: 2 }],  // octetTotalCount (v9 IN_PERMANENT_BYTES)
  [86, { kind: Kind.Packets, shape: U, rank: 2 }], // packetTotalCount (v9 IN_PERMANENT_PKTS)
  [231, { kind: Kind.Octets, shape: U, rank: 1 }],     // initiatorOctets
  [232, { kind: Kind.RevOctets, shape: U, rank: 1 }],  // responderOctets
  [298, { kind: Kind.Packets, shape: U, rank: 1 }],    // initiatorPackets
  [299, { kind: Kind.RevPackets, shape: U, rank: 1 }], // responderPackets
  [4, { kind: Kind.Proto, shape: U }],           // protocolIdentifier
  [6, { kind: Kind.Flags, shape: U }],           // tcpControlBits (8 or 16 bits, METHODS 3.6)
  [7, { kind: Kind.Sport, shape: U }],           // sourceTransportPort
  [8, { kind: Kind.Src4, shape: Shape.Ipv4 }],   // sourceIPv4Address
  [11, { kind: Kind.Dport, shape: U }],          // destinationTransportPort
  [12, { kind: Kind.Dst4, shape: Shape.Ipv4 }],  // destinationIPv4Address
  [21, { kind: Kind.EndSysUp, shape: U }],       // flowEndSysUpTime (v9 LAST_SWITCHED)
  [22, { kind: Kind.StartSysUp, shape: U }],     // flowStartSysUpTime (v9 FIRST_SWITCHED)
  [27, { kind: Kind.Src6, shape: Shape.Ipv6 }],  // sourceIPv6Address
  [28, { kind: Kind.Dst6, shape: Shape.Ipv6 }],  // destinationIPv6Address
  [32, { kind: Kind.IcmpTypeCode, shape: U }],   // icmpTypeCodeIPv4
  [34, { kind: Kind.SamplingInterval, shape: U }], // samplingInterval (v9 SAMPLING_INTERVAL)
  [50, { kind: Kind.SamplingInterval, shape: U }], // samplerRandomInterval (v9 FLOW_SAMPLER_RANDOM_INTERVAL)
  [305, { kind: Kind.SamplingInterval, shape: U }], // samplingPacketInterval
  [58, { kind: Kind.Vlan, shape: U }],           // vlanId
  [243, { kind: Kind.Vlan, shape: U, rank: 1 }], // dot1qVlanId
  [139, { kind: Kind.IcmpTypeCode, shape: U }],  // icmpTypeCodeIPv6
  [150, { kind: Kind.StartSec, shape: U }],      // flowStartSeconds
  [151, { kind: Kind.EndSec, shape: U }],        // flowEndSeconds
  [152, { kind: Kind.StartMs, shape: U }],       // flowStartMilliseconds
  [153, { kind: Kind.EndMs, shape: U }],         // flowEndMilliseconds
  [154, { kind: Kind.StartNtp, shape: Shape.Ntp }], // flowStartMicroseconds
  [155, { kind: Kind.EndNtp, shape: Shape.Ntp }],   // flowEndMicroseconds
  [156, { kind: Kind.StartNtp, shape: Shape.Ntp }], // flowStartNanoseconds
  [157, { kind: Kind.EndNtp, shape: Shape.Ntp }],   // flowEndNanoseconds
  [158, { kind: Kind.StartDeltaUs, shape: U }],  // flowStartDeltaMicroseconds (before the export time)
  [159, { kind: Kind.EndDeltaUs, shape: U }],    // flowEndDeltaMicroseconds
  [160, { kind: Kind.SysInitMs, shape: U }],     // systemInitTimeMilliseconds
  [161, { kind: Kind.DurationMs, shape: U }],    // flowDurationMilliseconds
  [162, { kind: Kind.DurationUs, shape: U }],    // flowDurationMicroseconds
  [176, { kind: Kind.IcmpType, shape: U }],      // icmpTypeIPv4
  [177, { kind: Kind.IcmpCode, shape: U }],      // icmpCodeIPv4
  [178, { kind: Kind.IcmpType, shape: U }],      // icmpTypeIPv6
  [179, { kind: Kind.IcmpCode, shape: U }],      // icmpCodeIPv6
  [233, { kind: Kind.FirewallEvent, shape: U }], // firewallEvent
  [239, { kind: Kind.BiflowDirection, shape: U }], // biflowDirection
  [322, { kind: Kind.ObsSec, shape: U }],        // observationTimeSeconds
  [323, { kind: Kind.ObsMs, shape: U }],         // observationTimeMilliseconds
  [324, { kind: Kind.ObsNtp, shape: Shape.Ntp }], // observationTimeMicroseconds
  [325, { kind: Kind.ObsNtp, shape: Shape.Ntp }], // observationTimeNanoseconds
]);

/** RFC 5103 reverse elements: same ids under PEN 29305. */
const REVERSE = new Map<number, Element>([
  [1, { kind: Kind.RevOctets, shape: U }],  // reverseOctetDeltaCount
  [2, { kind: Kind.RevPackets, shape: U }], // reversePacketDeltaCount
  [6, { kind: Kind.RevFlags, shape: U }],   // reverseTcpControlBits
  [85, { kind: Kind.RevOctets, shape: U, rank: 2 }],  // reverseOctetTotalCount
  [86, { kind: Kind.RevPackets, shape: U, rank: 2 }], // reversePacketTotalCount
]);

/** Variable-length marker in a Field Specifier (RFC 7011 section 7; METHODS.md 3.4). */
export const VARLEN = 0xffff;

/**
 * The kind for (enterprise, id, length). A field whose length cannot hold its type (an IPv4 address
 * that is not 4 octets, a variable-length counter, an integer over 8 octets) is skipped, so a odd
 * template never misreads; reduced-size integers (1..8 octets) are read at the template's length.
 */
export function kindOf(pen: number, id: number, len: number): Kind {
  const e = element(pen, id);
  if (!e) return Kind.Skip;
  switch (e.shape) {
    case Shape.Uint: return len >= 1 && len <= 8 ? e.kind : Kind.Skip;
    case Shape.Ipv4: return len === 4 ? e.kind : Kind.Skip;
    case Shape.Ipv6: return len === 16 ? e.kind : Kind.Skip;
    case Shape.Ntp: return len === 8 ? e.kind : Kind.Skip;
  }
}

function element(pen: number, id: number): Element | undefined {
  return pen === 0 ? IANA.get(id) : pen === REVERSE_PEN ? REVERSE.get(id) : undefined;
}

/** Precedence of (enterprise, id) among the elements of its kind: 0 first (see `Element.rank`). */
export function rankOf(pen: number, id: number): number {
  return element(pen, id)?.rank ?? 0;
}

export function isReverseKind(k: Kind): boolean {
  return k === Kind.RevOctets || k === Kind.RevPackets || k === Kind.RevFlags;
}
