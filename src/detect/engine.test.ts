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

  it('stays quiet on a host whose attempts succeed (no scan without failures)', () => {
    const recs: FlowRecord[] = [];
    for (let i = 0; i < 300; i++) {
      recs.push({ ...syn('10.60.1.20', `10.60.2.${i & 255}`, 443, T0 + i * 150), rpkts: 3, rbytes: 500, flags: 0x1b, rflags: 0x1b, outcome: 'established' });
    }
    expect(run(recs).filter((a) => a.kind.endsWith('scan'))).toEqual([]);
  });
});
