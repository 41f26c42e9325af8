/**
 * The features computed per host and window. Indices into a HostWindow's `values`. Names are the
 * `feature` strings alerts carry (docs/alert-schema.md). "out" is what the host sent, "in" what it
 * received, over both roles; the rest are about the host as initiator (source) unless marked target.
 */
export const FEATURES = [
  'flows_out', 'pkts_out', 'bytes_out',
  'flows_in', 'pkts_in', 'bytes_in',
  'nontcp_bytes_out', 'nontcp_bytes_in',
  'distinct_peers', 'distinct_dst_ports', 'distinct_peer_ports',
  'max_ports_per_peer', 'max_peers_per_port',
  'distinct_sources',
  'entropy_dst_ports', 'entropy_dst_addrs', 'entropy_src_ports', 'entropy_src_addrs',
  'attempts_out', 'failed_out', 'failure_ratio', 'syn_only_out',
  'failed_in', 'syn_only_in', 'icmp_unreach_in',
  'new_peers', 'new_peer_bytes',
] as const;
export type FeatureName = (typeof FEATURES)[number];
export const FEATURE_COUNT = FEATURES.length;

export const F = Object.fromEntries(FEATURES.map((n, i) => [n, i])) as { readonly [K in FeatureName]: number };

/** Role a feature speaks about: target-side features alert with role `target`. */
export function featureRole(name: FeatureName): 'source' | 'target' {
  return name.endsWith('_in') || name === 'distinct_sources' || name === 'entropy_src_addrs' ? 'target' : 'source';
}
