import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import type { FlowRecord } from '../flow/record.js';
import { F, FEATURE_COUNT } from './features.js';
import { HostAcc } from './host-acc.js';

function rec(dst: number, dport: number, sport: number, outcome: FlowRecord['outcome'] = 'established'): FlowRecord {
  return {
    start: 0, end: 1, proto: 6, src: '10.60.1.10', dst: `10.60.0.${dst}`, sport, dport, pkts: 3, bytes: 180,
    rpkts: outcome === 'established' ? 2 : 0, rbytes: outcome === 'established' ? 120 : 0,
    flags: outcome === 'established' ? 0x1b : 0x02, rflags: outcome === 'established' ? 0x1b : 0, outcome, exporter: 't',
  };
}

describe('HostAcc', () => {
  it('gives exact distinct counts and shapes, inline or promoted (property against a direct count; common practice, no source)', () => {
    fc.assert(fc.property(
      fc.array(fc.record({ peer: fc.integer({ min: 0, max: 6 }), dport: fc.integer({ min: 1, max: 5 }), sport: fc.integer({ min: 1000, max: 1002 }) }), { minLength: 1, maxLength: 60 }),
      (flows) => {
        const a = new HostAcc(0);
        for (const f of flows) a.asInitiator(rec(f.peer, f.dport, f.sport), f.peer, false);
        const v = a.values(new Float64Array(FEATURE_COUNT));
        const peers = new Set(flows.map((f) => f.peer));
        const ports = new Set(flows.map((f) => f.dport));
        const pairs = new Set(flows.map((f) => `${f.peer}/${f.dport}`));
        const perPeer = new Map<number, Set<number>>();
        const perPort = new Map<number, Set<number>>();
        for (const f of flows) {
          (perPeer.get(f.peer) ?? perPeer.set(f.peer, new Set()).get(f.peer)!).add(f.dport);
          (perPort.get(f.dport) ?? perPort.set(f.dport, new Set()).get(f.dport)!).add(f.peer);
        }
        expect(v[F.flows_out]).toBe(flows.length);
        expect(v[F.distinct_peers]).toBe(peers.size);
        expect(v[F.distinct_dst_ports]).toBe(ports.size);
        expect(v[F.distinct_peer_ports]).toBe(pairs.size);
        expect(v[F.max_ports_per_peer]).toBe(Math.max(...[...perPeer.values()].map((s) => s.size)));
        expect(v[F.max_peers_per_port]).toBe(Math.max(...[...perPort.values()].map((s) => s.size)));
        const top = a.topPeers(10);
        expect(top.reduce((s, e) => s + e.count, 0)).toBe(flows.length);
      },
    ), { numRuns: 300 });
  });

  it('counts failures, SYN-only flows and TRW observations of first attempts per pair', () => {
    const a = new HostAcc(0);
    a.asInitiator(rec(1, 22, 1000, 'unanswered'), 1, true);
    a.asInitiator(rec(1, 22, 1001, 'unanswered'), 1, false); // retry of the same pair: not a new observation
    a.asInitiator(rec(2, 22, 1002, 'rejected'), 2, true);
    a.asInitiator(rec(3, 22, 1003, 'established'), 3, true);
    const v = a.values(new Float64Array(FEATURE_COUNT));
    expect(v[F.attempts_out]).toBe(4);
    expect(v[F.failed_out]).toBe(3);
    expect(v[F.failure_ratio]).toBe(0.75);
    expect(v[F.syn_only_out]).toBe(3);
    expect([a.pairFail, a.pairOk]).toEqual([2, 1]);
    expect(v[F.new_peers]).toBe(3);
  });
});

describe('HostAcc past its exact bounds', () => {
  it('continues distinct counts in a HyperLogLog within 3 standard errors (Flajolet et al. 2007: 1.04/sqrt(m), p = 12)', () => {
    const a = new HostAcc(0);
    const n = 20_000;
    for (let i = 0; i < n; i++) a.asInitiator(rec(i % 250, 1 + (i % 9000), 1000 + (i % 7)), 10_000 + i, false);
    const v = a.values(new Float64Array(FEATURE_COUNT));
    const se = 1.04 / Math.sqrt(4096);
    expect(Math.abs(v[F.distinct_peers]! - n) / n).toBeLessThan(3 * se);
    expect(Math.abs(v[F.distinct_dst_ports]! - 9000) / 9000).toBeLessThan(3 * se);
    expect(Math.abs(v[F.distinct_peer_ports]! - n) / n).toBeLessThan(3 * se);
    expect(a.sketchCapped).toBe(true);
  });

  it('finds a vertical scan that starts after 5 000 other peers filled the exact per-peer counts (Space-Saving past the bound, Metwally et al. 2005)', () => {
    const a = new HostAcc(0);
    for (let i = 0; i < 5_000; i++) a.asInitiator(rec(1, 443, 40_000), 10_000 + i, false);
    for (let port = 1; port <= 300; port++) a.asInitiator(rec(2, port, 41_000, 'rejected'), 99_999, false);
    const v = a.values(new Float64Array(FEATURE_COUNT));
    expect(v[F.max_ports_per_peer]).toBeGreaterThanOrEqual(300);
    expect(a.topPortsPerPeer()?.key).toBe(99_999);
    expect(v[F.max_peers_per_port]).toBe(5_000);
    expect(a.topPeersPerPort()?.key).toBe(443);
  });
});
