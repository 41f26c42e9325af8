import { describe, expect, it } from 'vitest';
import type { FlowRecord } from '../flow/record.js';
import { CidrSet } from '../util/addr.js';
import { WindowAggregator, type ClosedWindow } from './aggregator.js';
import { F, FEATURE_COUNT } from './features.js';

const T0 = Date.UTC(2026, 2, 10, 9, 0, 0);
const r = (src: string, dst: string, t: number, bytes = 100): FlowRecord => ({
  start: t, end: t + 10, proto: 17, src, dst, sport: 5353, dport: 53, pkts: 1, bytes, rpkts: 1, rbytes: 80,
  flags: 0, rflags: 0, outcome: 'established', exporter: 't',
});

interface Seen { start: number; hosts: Map<string, Float64Array> }

/** Records each closed window's feature values while it is being closed (accumulators are reused after). */
function make() {
  const closed: Seen[] = [];
  const agg: WindowAggregator = new WindowAggregator({ windowMs: 60_000, latenessMs: 5_000, internal: new CidrSet(['10.0.0.0/8']) }, (w: ClosedWindow) => {
    closed.push({ start: w.start, hosts: new Map(w.hosts.map((h) => [agg.addresses.name(h.hostId), h.values(new Float64Array(FEATURE_COUNT))])) });
  });
  return { agg, closed };
}

describe('WindowAggregator', () => {
  it('a directed broadcast of an inside prefix is no target host (RFC 1122 section 3.2.1.3, from memory)', () => {
    const closed: ClosedWindow[] = [];
    const agg = new WindowAggregator({ windowMs: 60_000, latenessMs: 5_000, internal: new CidrSet(['192.168.1.0/24']) }, (w) => closed.push(w));
    agg.add(r('192.168.1.20', '192.168.1.255', T0 + 1_000));
    agg.add(r('192.168.1.21', '192.168.1.254', T0 + 2_000));
    agg.finish();
    expect(agg.stats.nonHostDst).toBe(1);
    expect(closed[0]!.hosts.map((h) => agg.addresses.name(h.hostId)).sort()).toEqual(['192.168.1.20', '192.168.1.21', '192.168.1.254']);
  });

  it('an address that behaves as a subnet broadcast is no target host, whatever the inside list says (RFC 1122 section 3.2.1.3, from memory)', () => {
    const closed: ClosedWindow[] = [];
    const agg = new WindowAggregator({ windowMs: 60_000, latenessMs: 5_000, internal: new CidrSet(['192.168.0.0/16']) }, (w) => closed.push(w));
    const oneWay = (src: string, dst: string, t: number, proto = 17): FlowRecord => ({ ...r(src, dst, t), proto, sport: 138, dport: 138, rpkts: 0, rbytes: 0, outcome: 'unanswered' });
    // a /23's broadcast, 192.168.5.255: sources from both halves of 192.168.4.0/23, nothing back
    for (let i = 1; i <= 6; i++) agg.add(oneWay(`192.168.${4 + (i % 2)}.${i}`, '192.168.5.255', T0 + i * 1_000));
    // the same shape to a .255 that answers, and to one reached over TCP: hosts
    for (let i = 1; i <= 3; i++) agg.add(r(`192.168.6.${i}`, '192.168.6.255', T0 + 10_000 + i));
    for (let i = 1; i <= 3; i++) agg.add(oneWay(`192.168.7.${i}`, '192.168.7.255', T0 + 20_000 + i, 6));
    // one-way UDP to a .255 from sources of other prefixes: a host too
    for (let i = 1; i <= 3; i++) agg.add(oneWay(`10.9.${i}.1`, '192.168.8.255', T0 + 30_000 + i));
    agg.finish();
    const names = closed[0]!.hosts.map((h) => agg.addresses.name(h.hostId));
    expect(names).not.toContain('192.168.5.255');
    expect(names).toEqual(expect.arrayContaining(['192.168.6.255', '192.168.7.255', '192.168.8.255', '192.168.5.1', '192.168.4.2']));
    expect(agg.stats.broadcastSinks).toBe(1);
    expect([...agg.broadcastNames]).toEqual(['192.168.5.255']);
  });

  it('drops a record dated a year ahead when the next one is back at the input time; takes a real jump (ours)', () => {
    const year = 365 * 86_400_000;
    const a = make();
    const shared = r('10.60.1.1', '10.60.0.2', T0 + 1_000);
    a.agg.add(shared);
    // the caller reuses its record object: the held one must be a copy
    Object.assign(shared, { start: T0 + year, end: T0 + year + 10, src: '10.60.1.99' });
    a.agg.add(shared);
    Object.assign(shared, { start: T0 + 2_000, end: T0 + 2_010, src: '10.60.1.1' });
    a.agg.add(shared);
    a.agg.finish();
    expect(a.agg.stats.timeOutliers).toBe(1);
    expect(a.closed).toHaveLength(1);
    expect(a.closed[0]!.hosts.has('10.60.1.99')).toBe(false);
    expect(a.closed[0]!.hosts.get('10.60.0.2')![F.flows_in]).toBe(2);

    const b = make();
    b.agg.add(r('10.60.1.1', '10.60.0.2', T0 + 1_000));
    b.agg.add(r('10.60.1.5', '10.60.0.2', T0 + 3 * 86_400_000)); // the input resumes three days later
    b.agg.add(r('10.60.1.6', '10.60.0.2', T0 + 3 * 86_400_000 + 500));
    b.agg.finish();
    expect(b.agg.stats.timeOutliers).toBe(0);
    expect(b.agg.stats.records).toBe(3);
    expect(b.closed.at(-1)!.hosts.has('10.60.1.5')).toBe(true);
  });

  it('closes a window once the watermark (latest time minus lateness) passes its end; later records for it are late (common practice, no source)', () => {
    const { agg, closed } = make();
    agg.add(r('10.60.1.1', '10.60.0.2', T0 + 1_000));
    agg.add(r('10.60.1.1', '10.60.0.2', T0 + 64_000)); // watermark 59 s: window 0 still open
    expect(closed.length).toBe(0);
    agg.add(r('10.60.1.2', '10.60.0.2', T0 + 30_000)); // within lateness: counted in window 0
    agg.add(r('10.60.1.1', '10.60.0.2', T0 + 66_000)); // watermark 61 s: window 0 closes
    expect(closed.length).toBe(1);
    agg.add(r('10.60.1.3', '10.60.0.2', T0 + 10_000)); // late
    expect(agg.stats.late).toBe(1);
    const w0 = closed[0]!;
    expect(w0.start).toBe(T0);
    const v = w0.hosts.get('10.60.0.2')!;
    expect(v[F.flows_in]).toBe(2);
    expect(v[F.distinct_sources]).toBe(2);
  });

  it('tracks both roles and emits empty windows across a quiet gap', () => {
    const { agg, closed } = make();
    agg.add(r('10.60.1.1', '198.51.100.7', T0));
    agg.add(r('10.60.1.1', '198.51.100.7', T0 + 5 * 60_000));
    agg.finish();
    expect(closed.map((w) => (w.start - T0) / 60_000)).toEqual([0, 1, 2, 3, 4, 5]);
    expect(closed[0]!.hosts.size).toBe(2);
    expect(closed[2]!.hosts.size).toBe(0);
  });

  it('counts a peer as new only once in the host history, and rare until other inside hosts use it', () => {
    const { agg, closed } = make();
    agg.add(r('10.60.1.1', '203.0.113.9', T0, 5_000_000));
    agg.add(r('10.60.1.1', '203.0.113.9', T0 + 1_000, 5_000_000));
    agg.finish();
    const v = closed[0]!.hosts.get('10.60.1.1')!;
    expect(v[F.new_peers]).toBe(1);
    expect(v[F.new_peer_bytes]).toBe(10_000_000);
    for (let i = 2; i < 6; i++) agg.add(r(`10.60.1.${i}`, '203.0.113.9', T0 + 120_000 + i));
    expect(agg.isRare(agg.addresses.peek('203.0.113.9'))).toBe(false);
  });
});

describe('records longer than a window (flow exports)', () => {
  it('spread packets and octets over the windows they cover, in proportion to time (common practice, no source)', () => {
    const { agg, closed } = make();
    agg.setLateness(30 * 60_000);
    // a 3-minute record exported at its end: 1/3 of its octets in each minute
    agg.add({ ...r('10.60.1.1', '198.51.100.7', T0, 300_000), end: T0 + 180_000, pkts: 300 });
    agg.finish();
    expect(closed.map((w) => (w.start - T0) / 60_000)).toEqual([0, 1, 2]);
    const bytes = closed.map((w) => w.hosts.get('10.60.1.1')![F.bytes_out]);
    const flows = closed.map((w) => w.hosts.get('10.60.1.1')![F.flows_out]);
    expect(bytes.map((b) => Math.round(b!))).toEqual([100_000, 100_000, 100_000]);
    expect(flows).toEqual([1, 0, 0]);
  });
});
