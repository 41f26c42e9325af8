import { describe, expect, it } from 'vitest';
import type { FlowRecord } from '../flow/record.js';
import { Sensor } from '../sensor/sensor.js';
import type { Alert } from '../alert/alert.js';

const T0 = Date.UTC(2026, 2, 10, 9, 0, 0);

function syn(src: string, dst: string, dport: number, t: number): FlowRecord {
  return { start: t, end: t + 3000, proto: 6, src, dst, sport: 40000 + (dport % 20000), dport, pkts: 2, bytes: 120, rpkts: 0, rbytes: 0, flags: 0x02, rflags: 0, outcome: 'unanswered', exporter: 't' };
}

function run(records: FlowRecord[]): Alert[] {
  const out: Alert[] = [];
  const s = new Sensor({ windowMs: 60_000, latenessMs: 5_000, alpha: 0.001, internal: ['10.0.0.0/8'], sensor: 't', mode: 'replay' }, (a) => out.push(a));
  for (const r of records.sort((a, b) => a.start - b.start)) s.record(r);
  s.finish();
  return out;
}

describe('detector engine', () => {
  it('flags a brand-new host opening 500 unanswered connections in its first window (population prior, the issue states it)', () => {
    const recs: FlowRecord[] = [];
    for (let i = 0; i < 500; i++) recs.push(syn('192.0.2.66', '10.60.0.5', 1 + i, T0 + i * 100));
    const alerts = run(recs);
    const open = alerts.filter((a) => a.state === 'open');
    expect(open.map((a) => [a.kind, a.host])).toContainEqual(['vertical-scan', '192.0.2.66']);
    const scan = open.find((a) => a.kind === 'vertical-scan')!;
    expect(scan.start).toBe('2026-03-10T09:00:00.000Z');
    expect(scan.evidence.peer).toBe('10.60.0.5');
  });

  it('flags a brand-new host sweeping 300 addresses on one port (horizontal scan by the prior)', () => {
    const recs: FlowRecord[] = [];
    for (let i = 0; i < 300; i++) recs.push(syn('192.0.2.67', `10.60.${1 + (i >> 8)}.${i & 255}`, 445, T0 + i * 150));
    const open = run(recs).filter((a) => a.state === 'open');
    expect(open.map((a) => [a.kind, a.host])).toContainEqual(['horizontal-scan', '192.0.2.67']);
  });

  it('stays quiet on a LAN\'s name-service broadcasts to its subnet broadcast, yet flags a UDP flood of a host (RFC 1122 section 3.2.1.3, from memory)', () => {
    const recs: FlowRecord[] = [];
    const udp = (src: string, dst: string, t: number): FlowRecord => ({
      start: t, end: t, proto: 17, src, dst, sport: 138, dport: 138, pkts: 1, bytes: 229, rpkts: 0, rbytes: 0, flags: 0, rflags: 0, outcome: 'unanswered', exporter: 't',
    });
    // 120 hosts of 10.60.4.0/23 (wider than any --internal prefix given) announce themselves every minute
    for (let m = 0; m < 15; m++) for (let h = 0; h < 120; h++) recs.push(udp(`10.60.${4 + (h & 1)}.${1 + (h >> 1)}`, '10.60.5.255', T0 + m * 60_000 + h * 400));
    // the same shape to a host that answers nothing, from outside sources: a flood
    for (let h = 0; h < 120; h++) recs.push({ ...udp(`198.51.100.${1 + h}`, '10.60.0.9', T0 + 600_000 + h * 300), pkts: 200, bytes: 200 * 229 });
    const open = run(recs).filter((a) => a.state === 'open');
    expect(open.filter((a) => a.host === '10.60.5.255')).toEqual([]);
    expect(open.map((a) => [a.kind, a.host])).toContainEqual(['fan-in-flood', '10.60.0.9']);
  });

  it('stays quiet on a syslog collector that 80 devices send to, yet flags a UDP flood of a host by its packets (ours)', () => {
    const recs: FlowRecord[] = [];
    const udp = (src: string, dst: string, t: number, pkts: number): FlowRecord => ({
      start: t, end: t + 50, proto: 17, src, dst, sport: 514, dport: 514, pkts, bytes: 180 * pkts, rpkts: 0, rbytes: 0, flags: 0, rflags: 0, outcome: 'unanswered', exporter: 't',
    });
    // one-way syslog: every device a few messages a minute, never answered
    for (let m = 0; m < 15; m++) for (let h = 0; h < 80; h++) recs.push(udp(`10.70.0.${10 + h}`, '10.60.0.20', T0 + m * 60_000 + h * 600, 3));
    // 120 outside sources sending 200 packets each in one minute at another host
    for (let h = 0; h < 120; h++) recs.push(udp(`198.51.100.${1 + h}`, '10.60.0.9', T0 + 600_000 + h * 300, 200));
    const open = run(recs).filter((a) => a.state === 'open');
    expect(open.filter((a) => a.host === '10.60.0.20')).toEqual([]);
    expect(open.map((a) => [a.kind, a.host])).toContainEqual(['fan-in-flood', '10.60.0.9']);
  });

  it('flags a ping sweep of 300 addresses, most silent, as a horizontal scan; a monitor whose pings are answered stays quiet (ours)', () => {
    const echo = (src: string, dst: string, t: number, answered: boolean): FlowRecord => ({
      start: t, end: t + 1, proto: 1, src, dst, sport: 0, dport: 8 * 256, pkts: 1, bytes: 84, rpkts: answered ? 1 : 0, rbytes: answered ? 84 : 0,
      flags: 0, rflags: 0, outcome: answered ? 'established' : 'unanswered', exporter: 't',
    });
    const recs: FlowRecord[] = [];
    for (let i = 0; i < 300; i++) recs.push(echo('192.0.2.68', `10.60.${2 + (i >> 8)}.${i & 255}`, T0 + i * 150, i % 10 === 0));
    for (let m = 0; m < 3; m++) for (let i = 0; i < 100; i++) recs.push(echo('10.60.0.3', `10.60.1.${i}`, T0 + m * 60_000 + i * 200, true));
    const open = run(recs).filter((a) => a.state === 'open');
    expect(open.map((a) => [a.kind, a.host])).toContainEqual(['horizontal-scan', '192.0.2.68']);
    expect(open.filter((a) => a.host === '10.60.0.3')).toEqual([]);
  });

  it('stays quiet on a host whose attempts succeed (no scan without failures)', () => {
    const recs: FlowRecord[] = [];
    for (let i = 0; i < 300; i++) {
      recs.push({ ...syn('10.60.1.20', `10.60.2.${i & 255}`, 443, T0 + i * 150), rpkts: 3, rbytes: 500, flags: 0x1b, rflags: 0x1b, outcome: 'established' });
    }
    expect(run(recs).filter((a) => a.kind.endsWith('scan'))).toEqual([]);
  });
});
