import { describe, expect, it } from 'vitest';
import { ACK, FIN, PSH, RST, SYN, ether, icmp, ipv4, ipv6, tcp, udp } from '../../test/bench/frames.js';
import { Decoder } from '../decode/decoder.js';
import type { FlowRecord } from './record.js';
import { FlowTable, type FlowTableOptions } from './table.js';

const C = '10.60.1.5', S = '198.51.100.7';
const T0 = 1_700_000_040_000; // a multiple of 60 s

function harness(opts: Partial<FlowTableOptions> = {}) {
  const out: FlowRecord[] = [];
  const table = new FlowTable({ windowMs: 60_000, idleTimeoutMs: 60_000, activeTimeoutMs: 300_000, maxFlows: 1000, exporter: 'test.pcap', ...opts }, (r) => out.push(r));
  const d = new Decoder();
  const send = (frame: Uint8Array, ts: number, linkType = 101) => {
    expect(d.decode(frame, 0, frame.length, linkType)).toBe(true);
    d.view.tsMs = ts;
    table.add(d.view);
  };
  return { out, table, send };
}

const t4 = (src: string, dst: string, sp: number, dp: number, flags: number, len = 0) => ipv4({ src, dst, proto: 6, payload: tcp(sp, dp, flags, len) });
const u4 = (src: string, dst: string, sp: number, dp: number, len = 0) => ipv4({ src, dst, proto: 17, payload: udp(sp, dp, len) });

describe('FlowTable: initiator, direction counters, TCP outcomes (record.ts conventions)', () => {
  it('a full TCP session is one established record; FIN both ways ends it after the linger', () => {
    const { out, table, send } = harness();
    send(t4(C, S, 40000, 443, SYN), T0 + 1);
    send(t4(S, C, 443, 40000, SYN | ACK), T0 + 2);
    send(t4(C, S, 40000, 443, ACK), T0 + 3);
    send(t4(C, S, 40000, 443, PSH | ACK, 100), T0 + 4);
    send(t4(S, C, 443, 40000, PSH | ACK, 1000), T0 + 5);
    send(t4(C, S, 40000, 443, FIN | ACK), T0 + 6);
    send(t4(S, C, 443, 40000, FIN | ACK), T0 + 7);
    send(t4(C, S, 40000, 443, ACK), T0 + 8);
    expect(out).toHaveLength(0);
    table.advance(T0 + 8 + 2500);
    expect(out).toEqual([{
      start: T0 + 1, end: T0 + 8, proto: 6, src: C, dst: S, sport: 40000, dport: 443,
      pkts: 5, bytes: 40 * 4 + 140, rpkts: 3, rbytes: 40 * 2 + 1040, flags: SYN | ACK | PSH | FIN, rflags: SYN | ACK | PSH | FIN,
      outcome: 'established', exporter: 'test.pcap',
    }]);
    expect(table.stats.active).toBe(0);
  });

  it('SYN answered by RST is rejected (METHODS.md 2.4)', () => {
    const { out, table, send } = harness();
    send(t4(C, S, 40001, 23, SYN), T0);
    send(t4(S, C, 23, 40001, RST | ACK), T0 + 1);
    table.flush();
    expect(out.map((r) => [r.src, r.outcome, r.rflags])).toEqual([[C, 'rejected', RST | ACK]]);
  });

  it('unanswered SYNs, a half-open handshake and a mid-stream start', () => {
    const { out, table, send } = harness();
    send(t4(C, S, 40002, 80, SYN), T0);
    send(t4(C, S, 40002, 80, SYN), T0 + 1000);
    send(t4(C, S, 40003, 80, SYN), T0);
    send(t4(S, C, 80, 40003, SYN | ACK), T0 + 1);
    send(t4(S, C, 80, 40004, ACK, 500), T0 + 2); // first packet not a SYN: its sender is the initiator
    table.flush();
    const by = new Map(out.map((r) => [r.sport === 80 ? r.dport : r.sport, r]));
    expect(by.get(40002)!.outcome).toBe('unanswered');
    expect(by.get(40002)!.pkts).toBe(2);
    expect(by.get(40003)!.outcome).toBe('partial');
    expect([by.get(40004)!.src, by.get(40004)!.sport, by.get(40004)!.outcome]).toEqual([S, 80, 'partial']);
  });

  it('an ACK after its SYN completes the handshake when the SYN-ACK was not seen (RFC 9293 section 3.5: an ACK acknowledges what was received); counted as one-way', () => {
    const { out, table, send } = harness();
    // one direction of a tap: SYN, ACK, data, FIN from the client, nothing back
    send(t4(C, S, 40010, 443, SYN), T0);
    send(t4(C, S, 40010, 443, ACK), T0 + 20);
    send(t4(C, S, 40010, 443, PSH | ACK, 300), T0 + 21);
    // a SYN then a RST from the initiator is no answer seen (a half-open probe torn down)
    send(t4(C, S, 40011, 443, SYN), T0);
    send(t4(C, S, 40011, 443, RST), T0 + 5);
    table.flush();
    const by = new Map(out.map((r) => [r.sport, r]));
    expect(by.get(40010)!.outcome).toBe('established');
    expect(by.get(40011)!.outcome).toBe('unanswered');
    expect([table.stats.tcpCompleted, table.stats.tcpCompletedUnseen]).toEqual([1, 1]);
  });

  it('UDP: the first sender is the initiator; both directions make it established', () => {
    const { out, table, send } = harness();
    send(u4(C, S, 53001, 53, 30), T0);
    send(u4(S, C, 53, 53001, 90), T0 + 5);
    send(u4(C, S, 53002, 53, 30), T0 + 6);
    table.flush();
    expect(out.map((r) => [r.sport, r.pkts, r.bytes, r.rpkts, r.rbytes, r.outcome])).toEqual([
      [53001, 1, 58, 1, 118, 'established'],
      [53002, 1, 58, 0, 0, 'unanswered'],
    ]);
  });

  it('ICMP port unreachable rejects the quoted UDP flow and is its own ICMP flow (RFC 792 quote)', () => {
    const { out, table, send } = harness();
    const probe = u4(C, S, 33434, 33435, 12);
    send(probe, T0);
    send(ipv4({ src: S, dst: C, proto: 1, payload: icmp(3, 3, probe.subarray(0, 28)) }), T0 + 1);
    table.flush();
    const udpFlow = out.find((r) => r.proto === 17)!;
    const icmpFlow = out.find((r) => r.proto === 1)!;
    expect([udpFlow.outcome, udpFlow.rpkts]).toEqual(['rejected', 0]);
    // type 3 code 3 -> dport 771 (METHODS.md 10 row 15)
    expect([icmpFlow.src, icmpFlow.dst, icmpFlow.sport, icmpFlow.dport, icmpFlow.outcome]).toEqual([S, C, 0, 771, 'n/a']);
  });

  it('ICMP time exceeded makes the quoted probe partial, neither answered nor failed (RFC 792 type 11, RFC 4443 section 3.3)', () => {
    const { out, table, send } = harness();
    const probe = u4(C, S, 40100, 33434, 12);
    send(probe, T0);
    send(ipv4({ src: '203.0.113.1', dst: C, proto: 1, payload: icmp(11, 0, probe.subarray(0, 28)) }), T0 + 1);
    const syn = t4(C, S, 40101, 80, SYN);
    send(syn, T0 + 2);
    send(ipv4({ src: '203.0.113.2', dst: C, proto: 1, payload: icmp(11, 0, syn.subarray(0, 28)) }), T0 + 3);
    table.flush();
    expect(out.filter((r) => r.proto !== 1).map((r) => [r.proto, r.outcome])).toEqual([[17, 'partial'], [6, 'partial']]);
    expect(out.filter((r) => r.proto === 1).map((r) => [r.src, r.dport, r.outcome])).toEqual([['203.0.113.1', 11 * 256, 'n/a'], ['203.0.113.2', 11 * 256, 'n/a']]);
  });

  it('ICMPv6 port unreachable rejects the quoted IPv6 UDP flow; addresses in RFC 5952 form', () => {
    const { out, table, send } = harness();
    const a = '2001:db8:60:0:0:0:0:5', b = '2001:db8:0:0:1:0:0:99';
    const probe = ipv6({ src: a, dst: b, proto: 17, payload: udp(40001, 161, 20) });
    send(probe, T0);
    send(ipv6({ src: b, dst: a, proto: 58, payload: icmp(1, 4, probe.subarray(0, 48)) }), T0 + 1);
    table.flush();
    const u = out.find((r) => r.proto === 17)!;
    expect([u.src, u.dst, u.outcome]).toEqual(['2001:db8:60::5', '2001:db8::1:0:0:99', 'rejected']);
    expect(out.find((r) => r.proto === 58)!.dport).toBe(0x0104);
  });

  it('an echo reply is folded into its request flow, also when the request was not seen; the request is answered or not (RFC 792 types 8 and 0)', () => {
    const { out, table, send } = harness();
    send(ipv4({ src: C, dst: S, proto: 1, payload: icmp(8, 0, new Uint8Array(56)) }), T0);
    send(ipv4({ src: S, dst: C, proto: 1, payload: icmp(0, 0, new Uint8Array(56)) }), T0 + 1);
    send(ipv4({ src: S, dst: '10.60.1.6', proto: 1, payload: icmp(0, 0, new Uint8Array(56)) }), T0 + 2);
    send(ipv4({ src: C, dst: '198.51.100.8', proto: 1, payload: icmp(8, 0, new Uint8Array(56)) }), T0 + 3);
    send(ipv4({ src: C, dst: '198.51.100.9', proto: 1, payload: icmp(13, 0, new Uint8Array(12)) }), T0 + 4);
    // a router's host unreachable quoting an echo request refuses it (RFC 792 type 3 code 1)
    const ping = ipv4({ src: C, dst: '198.51.100.10', proto: 1, payload: icmp(8, 0, new Uint8Array(56)) });
    send(ping, T0 + 5);
    send(ipv4({ src: '203.0.113.9', dst: C, proto: 1, payload: icmp(3, 1, ping.subarray(0, 28)) }), T0 + 6);
    table.flush();
    expect(out.map((r) => [r.src, r.dst, r.sport, r.dport, r.pkts, r.rpkts, r.outcome])).toEqual([
      [C, S, 0, 0x0800, 1, 1, 'established'],
      ['10.60.1.6', S, 0, 0x0800, 0, 1, 'established'],
      [C, '198.51.100.8', 0, 0x0800, 1, 0, 'unanswered'],
      [C, '198.51.100.9', 0, 13 * 256, 1, 0, 'n/a'],
      [C, '198.51.100.10', 0, 0x0800, 1, 0, 'rejected'],
      ['203.0.113.9', C, 0, 3 * 256 + 1, 1, 0, 'n/a'],
    ]);
  });

  it('later fragments count to the first fragment\'s flow; unmatched ones to a port-less host pair', () => {
    const { out, table, send } = harness();
    send(ipv4({ src: C, dst: S, proto: 17, id: 9, moreFragments: true, payload: udp(5000, 9999, 1472) }), T0);
    send(ipv4({ src: C, dst: S, proto: 17, id: 9, fragOffset: 185, payload: new Uint8Array(100) }), T0 + 1);
    send(ipv4({ src: C, dst: S, proto: 17, id: 10, fragOffset: 185, payload: new Uint8Array(100) }), T0 + 2);
    table.flush();
    expect(out.map((r) => [r.sport, r.dport, r.pkts, r.bytes])).toEqual([[5000, 9999, 2, 1500 + 120], [0, 0, 1, 120]]);
  });

  it('vlan is the decoded outermost VID and absent when untagged', () => {
    const { out, table, send } = harness();
    send(ether(0x0800, u4(C, S, 1, 2), [{ tpid: 0x88a8, vid: 100 }, { vid: 7 }]), T0, 1);
    send(u4(C, S, 3, 4), T0, 101);
    table.flush();
    expect(out[0]!.vlan).toBe(100);
    expect('vlan' in out[1]!).toBe(false);
  });
});

describe('FlowTable: window cuts, timeouts and the cap', () => {
  it('each window gets exactly its own packets; the later update keeps the established outcome', () => {
    const { out, table, send } = harness();
    send(t4(C, S, 40000, 443, SYN), T0 + 58_000);
    send(t4(S, C, 443, 40000, SYN | ACK), T0 + 58_100);
    send(t4(C, S, 40000, 443, ACK, 100), T0 + 59_000);
    send(t4(C, S, 40000, 443, ACK, 200), T0 + 61_000); // next window: cuts the pending update first
    expect(out).toHaveLength(1);
    expect([out[0]!.start, out[0]!.end, out[0]!.pkts, out[0]!.rpkts, out[0]!.bytes]).toEqual([T0 + 58_000, T0 + 59_000, 2, 1, 180]);
    table.flush();
    expect([out[1]!.start, out[1]!.pkts, out[1]!.rpkts, out[1]!.bytes, out[1]!.outcome]).toEqual([T0 + 61_000, 1, 0, 240, 'established']);
  });

  it('the boundary sweep emits flows of the previous window once event time is past it plus the lateness', () => {
    const { out, send } = harness();
    send(u4(C, S, 1, 2), T0 + 10_000);
    send(u4(C, S, 3, 4), T0 + 63_000);
    expect(out).toHaveLength(0); // still inside the allowed lateness
    send(u4(C, S, 3, 4), T0 + 65_001);
    expect(out.map((r) => r.sport)).toEqual([1]);
  });

  it('out-of-order packets join the pending update and never move the sweep back', () => {
    const { out, table, send } = harness();
    send(u4(C, S, 1, 2), T0 + 2000);
    send(u4(C, S, 1, 2), T0 + 1000);
    table.flush();
    expect([out[0]!.start, out[0]!.end, out[0]!.pkts]).toEqual([T0 + 1000, T0 + 2000, 2]);
  });

  it('window 0 disables cuts; the idle timeout ends a flow and a later packet starts a new one', () => {
    const { out, table, send } = harness({ windowMs: 0, idleTimeoutMs: 30_000 });
    send(u4(C, S, 1, 2), T0 + 50_000);
    send(u4(C, S, 1, 2), T0 + 70_000);
    expect(out).toHaveLength(0);
    send(u4(C, S, 9, 9), T0 + 100_001);
    expect(out.map((r) => [r.sport, r.pkts])).toEqual([[1, 2]]);
    send(u4(S, C, 2, 1), T0 + 100_002);
    table.flush();
    expect(out.slice(1).map((r) => [r.src, r.sport])).toEqual([[C, 9], [S, 2]]);
  });

  it('the active timeout cuts a long flow into updates', () => {
    const { out, table, send } = harness({ windowMs: 0, activeTimeoutMs: 300_000 });
    for (let t = 0; t <= 700_000; t += 10_000) send(u4(C, S, 1, 2), T0 + t);
    table.flush();
    expect(out.map((r) => r.pkts)).toEqual([30, 30, 11]);
    expect(out[1]!.start - out[0]!.start).toBe(300_000);
  });

  it('a full table evicts the least recently seen flow, emits it and counts it', () => {
    const { out, table, send } = harness({ maxFlows: 2 });
    send(u4(C, S, 1, 1), T0);
    send(u4(C, S, 2, 2), T0 + 1);
    send(u4(C, S, 1, 1), T0 + 2);
    send(u4(C, S, 3, 3), T0 + 3);
    expect(out.map((r) => r.sport)).toEqual([2]);
    expect(table.problemCounts()).toEqual({ 'flow-evicted': 1 });
    table.flush();
    expect(out.map((r) => r.sport).sort()).toEqual([1, 2, 3]);
  });

  it('eviction takes a small batch even when every held flow was last seen at the same time', () => {
    const { table, send } = harness({ maxFlows: 64 });
    for (let i = 0; i < 65; i++) send(u4(C, S, 1000 + i, 53), T0);
    expect(table.stats.evicted).toBe(2); // ceil(64 / 32)
    expect(table.stats.active).toBe(63);
  });

  it('many flows through a small table: every packet is accounted for (index deletes stay consistent)', () => {
    const { out, table } = harness({ maxFlows: 300, windowMs: 0, idleTimeoutMs: 5_000 });
    const d = new Decoder();
    let seed = 7;
    const rnd = () => ((seed = (Math.imul(seed, 1103515245) + 12345) >>> 0) >>> 8) / 0x1000000;
    let sent = 0;
    for (let i = 0; i < 20_000; i++) {
      const a = `10.60.${(rnd() * 4) | 0}.${(rnd() * 250) | 0}`, b = `203.0.113.${(rnd() * 250) | 0}`;
      const sp = 1000 + ((rnd() * 20) | 0);
      const f = rnd() < 0.5 ? u4(a, b, sp, 53) : u4(b, a, 53, sp);
      d.decode(f, 0, f.length, 101);
      d.view.tsMs = T0 + i * 3;
      table.add(d.view);
      sent++;
    }
    table.flush();
    expect(out.reduce((n, r) => n + r.pkts + r.rpkts, 0)).toBe(sent);
    expect(table.stats.active).toBe(0);
    expect(table.stats.evicted).toBeGreaterThan(0);
  });
});
