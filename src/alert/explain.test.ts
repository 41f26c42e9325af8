import { describe, expect, it } from 'vitest';
import type { Alert } from './alert.js';
import { explain, fmtBytes } from './explain.js';

function alert(feature: string, observed: number, extra: Record<string, unknown> = {}, over: Partial<Alert> = {}): Alert {
  return {
    schema: 'tidewatch.alert/1', id: 'tw1-0000000000000000', kind: 'vertical-scan', severity: 'high',
    host: '10.60.2.14', role: 'source', start: '2024-05-06T07:00:00.000Z', end: '2024-05-06T07:01:00.000Z',
    state: 'open', feature, observed, expected: 1, low: -2, high: 4.2, score: 14, rule: 'r', sensor: 's',
    evidence: { top_peers: [{ peer: '10.60.0.5', count: 812 }], top_ports: [{ port: 22, count: 9 }], sample_flows: [], flows: 812, packets: 1624, bytes: 50000, window_s: 60, ...extra },
    ...over,
  };
}

describe('explain', () => {
  it('reads a vertical scan as one sentence with the normal range and the failure share', () => {
    expect(explain(alert('max_ports_per_peer', 812, { peer: '10.60.0.5', failure_ratio: 0.97 })))
      .toBe('10.60.2.14 contacted 812 distinct ports on 10.60.0.5 in 60 s; its normal is 0 to 4; 97% of the attempts failed.');
  });

  it('names the port of a horizontal scan and uses byte units for volumes', () => {
    expect(explain(alert('max_peers_per_port', 254, { port: 445 })))
      .toBe('10.60.2.14 contacted 254 distinct hosts on port 445 in 60 s; its normal is 0 to 4.');
    expect(explain(alert('bytes_out', 3_400_000_000, {}, { low: 1_000_000, high: 52_000_000 })))
      .toBe('10.60.2.14 sent 3.4 GB in 60 s; its normal is 1.0 MB to 52 MB.');
    expect(explain(alert('failure_ratio', 0.9, {}, { low: 0, high: 0.2 })))
      .toBe('90% of the connection attempts by 10.60.2.14 failed in 60 s; its normal is 0% to 20%.');
  });

  it('has a phrase for every feature the detectors use, and a generic one for the rest', () => {
    const features = ['bytes_out', 'bytes_in', 'pkts_out', 'pkts_in', 'flows_out', 'flows_in', 'distinct_peers',
      'distinct_dst_ports', 'max_ports_per_peer', 'max_peers_per_port', 'distinct_sources', 'failed_out',
      'failure_ratio', 'syn_only_in', 'new_peer_bytes', 'entropy_dst_ports', 'entropy_dst_addrs', 'entropy_src_addrs'];
    for (const f of features) {
      const s = explain(alert(f, 10));
      expect(s).not.toContain(f);
      expect(s).toMatch(/\.$/);
    }
    expect(explain(alert('odd_feature', 1.23456))).toBe('10.60.2.14 (source) showed odd_feature = 1.2346 in 60 s; its normal is 0 to 4.2.');
  });

  // SI decimal prefixes (kilo = 10^3, IEC 80000-13 keeps kB for 1000 B), not binary KiB.
  it('fmtBytes uses SI units (1 kB = 1000 B)', () => {
    expect([0, 999, 1000, 1500, 15_000, 999_999, 2_500_000, 7e12].map(fmtBytes)).toEqual(['0 B', '999 B', '1.0 kB', '1.5 kB', '15 kB', '1.0 MB', '2.5 MB', '7.0 TB']);
  });
});
