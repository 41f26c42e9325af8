import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Command } from 'commander';
import { describe, expect, it, vi } from 'vitest';
import { register } from '../cli/eval.js';
import { checkTruth, parseAlertLines, scoreAlerts } from './eval.js';
import type { Truth } from './truth.js';

const truth: Truth = {
  scenario: 'larkspur', kind: 'incident', seed: 1, start: '2026-03-10T09:00:00.000Z', end: '2026-03-10T15:00:00.000Z', window_s: 60,
  inside: ['10.60.0.0/24'], hosts: ['10.60.0.5', '10.60.0.6', '192.168.60.23'], benign_host_hours: 200,
  episodes: [
    { id: 'E1', family: 'scan', kind: 'vertical-scan', attackers: ['192.168.60.23'], victims: ['10.60.0.5'], start: '2026-03-10T10:00:00.000Z', end: '2026-03-10T10:03:00.000Z' },
    { id: 'E2', family: 'flood', kind: 'fan-in-flood', attackers: ['198.51.100.9'], victims: ['10.60.0.6'], start: '2026-03-10T11:00:00.000Z', end: '2026-03-10T11:04:00.000Z' },
    { id: 'E3', family: 'unusual-destination', kind: 'unusual-destination', attackers: ['10.60.1.31'], victims: ['203.0.113.200'], start: '2026-03-10T12:00:00.000Z', end: '2026-03-10T12:10:00.000Z' },
  ],
  benign: [{ label: 'nightly-backup', hosts: ['10.60.0.9'], start: '2026-03-10T13:00:00.000Z', end: '2026-03-10T13:30:00.000Z' }],
};

/** An alert line in the feed's key order (DESIGN.md section 4); only the keys eval reads matter here. */
function line(id: string, kind: string, host: string, start: string, end: string, state = 'open'): string {
  return JSON.stringify({ schema: 'tidewatch.alert/1', id, kind, severity: 'high', host, role: 'source', start: `2026-03-10T${start}:00.000Z`,
    end: `2026-03-10T${end}:00.000Z`, state, feature: 'f', observed: 1, expected: 0, low: 0, high: 0, score: 9, evidence: {}, rule: 'r', sensor: 's' });
}

describe('parseAlertLines', () => {
  it('merges open/update/closed lines of one id into the union of their spans and reports bad lines', () => {
    const text = [line('a', 'vertical-scan', '192.168.60.23', '10:01', '10:02'), line('a', 'vertical-scan', '192.168.60.23', '10:02', '10:04', 'update'),
      '', 'not json', '{"id": 3}', line('a', 'vertical-scan', '192.168.60.23', '10:00', '10:05', 'closed')].join('\n');
    const { alerts, problems } = parseAlertLines(text, 'f.jsonl');
    expect(alerts).toEqual([{ id: 'a', kind: 'vertical-scan', host: '192.168.60.23', start: Date.parse('2026-03-10T10:00:00Z'), end: Date.parse('2026-03-10T10:05:00Z') }]);
    expect(problems.map((p) => [p.line, p.reason])).toEqual([[4, 'bad-alert-line'], [5, 'bad-alert-line']]);
  });
});

describe('scoreAlerts', () => {
  const score = (...lines: string[]) => scoreAlerts(truth, parseAlertLines(lines.join('\n'), 'x').alerts);

  it('detects by family, host and overlap; delay is the first matching start minus the episode start', () => {
    const r = score(
      line('v1', 'vertical-scan', '192.168.60.23', '10:02', '10:03'),
      line('v2', 'horizontal-scan', '10.60.0.5', '10:01', '10:02'), // same family, victim host: also matches
      line('f1', 'fan-in-flood', '10.60.0.6', '11:08', '11:09'), // within the 5-minute grace after 11:04
    );
    expect(r.episodes.map((e) => [e.id, e.detected, e.delay_s, e.alerts])).toEqual([
      ['E1', true, 60, ['v2', 'v1']], ['E2', true, 480, ['f1']], ['E3', false, null, []],
    ]);
    expect(r.recall).toBeCloseTo(2 / 3);
    expect(r.precision).toBe(1);
    expect(r.false_per_100_host_hours).toBe(0);
  });

  it('counts wrong family, wrong host and late alerts as false, split by benign period', () => {
    const r = score(
      line('w1', 'volume-surge', '192.168.60.23', '10:01', '10:02'), // wrong family: explained, not a detection
      line('w2', 'vertical-scan', '10.60.0.7', '10:01', '10:02'), // host not in the episode
      line('w3', 'fan-in-flood', '10.60.0.6', '11:10', '11:12'), // starts after end + 5 min
      line('b1', 'volume-surge', '10.60.0.9', '13:10', '13:20'), // during the backup, on its host
    );
    expect(r.detected).toBe(0);
    expect([r.false_benign_period, r.false_other, r.false_alerts, r.explained]).toEqual([1, 2, 3, 1]);
    expect(r.precision).toBe(0);
    expect(r.false_per_100_host_hours).toBe(1.5);
    expect(r.verdicts).toMatchObject({ w1: 'explained', b1: 'false-benign-period', w3: 'false-other' });
  });

  it('treats an overlapping traffic-shift on an episode host as explained, elsewhere as false', () => {
    const r = score(
      line('t1', 'traffic-shift', '10.60.1.31', '12:05', '12:06'),
      line('t2', 'traffic-shift', '10.60.1.31', '14:00', '14:01'),
      line('u1', 'unusual-destination', '10.60.1.31', '12:01', '12:02'),
    );
    expect([r.explained, r.true_alerts, r.false_alerts]).toEqual([1, 1, 1]);
    expect(r.episodes[2]!.delay_s).toBe(60);
    expect(r.precision).toBe(0.5);
  });

  it('gives null precision with no alerts and null recall with no episodes', () => {
    expect(score().precision).toBeNull();
    expect(scoreAlerts({ ...truth, episodes: [] }, []).recall).toBeNull();
  });
});

describe('checkTruth', () => {
  it('accepts generator output shape and rejects malformed files', () => {
    expect(checkTruth(truth)).toBeNull();
    expect(checkTruth([])).not.toBeNull();
    expect(checkTruth({ ...truth, episodes: [{ ...truth.episodes[0], family: 'worm' }] })).toMatch(/malformed/);
  });
});

describe('tidewatch eval', () => {
  it('prints the numbers with --json', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'tw-eval-'));
    writeFileSync(join(dir, 't.json'), JSON.stringify(truth));
    writeFileSync(join(dir, 'a.jsonl'), line('v1', 'vertical-scan', '192.168.60.23', '10:02', '10:03') + '\n');
    const out: string[] = [];
    const spy = vi.spyOn(process.stdout, 'write').mockImplementation((s) => { out.push(String(s)); return true; });
    try {
      const program = new Command().exitOverride();
      register(program);
      await program.parseAsync(['node', 'tidewatch', 'eval', '--truth', join(dir, 't.json'), join(dir, 'a.jsonl'), '--json']);
    } finally {
      spy.mockRestore();
    }
    const r = JSON.parse(out.join(''));
    expect([r.detected, r.missed, r.true_alerts, r.bad_lines]).toEqual([1, 2, 1, 0]);
    expect(r.episodes[0].delay_s).toBe(120);
  });
});
