/**
 * Why a packet was skipped (or, for the few marked "kept", what was noted while still counting it).
 * Counted in a typed array by index so the hot path never touches strings.
 */
export const REASONS = [
  'undecoded-linktype',
  'truncated-ethernet',
  'truncated-vlan',
  'truncated-llc',
  'truncated-sll',
  'truncated-sll2',
  'truncated-null',
  'bad-ethertype',
  'llc-not-snap',
  'vlan-too-deep',
  'truncated-mpls',
  'mpls-too-deep',
  'mpls-non-ip',
  'truncated-pppoe',
  'truncated-ppp',
  'ppp-non-ip',
  'truncated-hdlc',
  'arp',
  'non-ip',
  'null-unknown-family',
  'bad-ip-version',
  'truncated-ipv4',
  'bad-ihl',
  'bad-ipv4-length',
  'truncated-ipv6',
  'truncated-ipv6-ext',
  'ipv6-ext-chain-too-long',
  'ipv6-hop-by-hop-misplaced',
  'truncated-tcp',
  'bad-tcp-offset',
  'truncated-udp',
  'truncated-icmp',
  // kept: the packet is still counted into a flow
  'truncated-icmp-quote',
  'unmatched-fragment',
  'tiny-first-fragment',
  'tunnel-too-deep',
] as const;

export type Reason = (typeof REASONS)[number];

/** Index of each reason in `REASONS`, for `DecodeStats.count`. */
export const R = Object.fromEntries(REASONS.map((r, i) => [r, i])) as { readonly [K in Reason]: number };

export class DecodeStats {
  /** Packets given to `decode`. */
  packets = 0;
  /** Packets decoded into the view (returned true). */
  decoded = 0;
  /** Tunnels opened (VXLAN, GENEVE, GRE with Ethernet, ERSPAN): the inner packet was decoded. */
  decapsulated = 0;
  /** The first link type met that is not decoded (its packets count as `undecoded-linktype`), or -1. */
  undecodedLinkType = -1;
  readonly counts = new Float64Array(REASONS.length);

  count(reason: number): void {
    this.counts[reason]!++;
  }

  get(reason: Reason): number {
    return this.counts[R[reason]]!;
  }

  /** Non-zero counts by reason name. */
  toObject(): Record<string, number> {
    const out: Record<string, number> = {};
    for (let i = 0; i < REASONS.length; i++) if (this.counts[i]! > 0) out[REASONS[i]!] = this.counts[i]!;
    return out;
  }
}
