import { describe, expect, it } from 'vitest';
import { parseAlerts } from '../../src/report/alerts-file.js';

const alert = (over: Record<string, unknown>) => JSON.stringify({
  schema: 'tidewatch.alert/1', id: 'tw1-0000000000000001', kind: 'vertical-scan', severity: 'low', host: '10.60.2.14',
  role: 'source', start: '2026-03-10T09:15:00.000Z', end: '2026-03-10T09:16:00.000Z', state: 'open',
  feature: 'max_ports_per_peer', observed: 56, expected: 2, low: 0, high: 38, score: 4.2,
  evidence: { top_peers: [], top_ports: [], sample_flows: [], flows: 1, packets: 2, bytes: 80 },
  rule: 'vertical-scan/prior', sensor: 'test', ...over,
});

describe('alerts file', () => {
  it('keeps the latest line of each episode and orders episodes by start', () => {
    const text = [
      alert({}),
      alert({ id: 'tw1-0000000000000002', host: '10.60.0.5', start: '2026-03-10T09:01:00.000Z', end: '2026-03-10T09:02:00.000Z' }),
      alert({ state: 'closed', end: '2026-03-10T09:19:00.000Z', observed: 334 }),
      '',
    ].join('\n');
    const { episodes, problems } = parseAlerts(text, 'a.jsonl');
    expect(problems).toEqual([]);
    expect(episodes.map((e) => e.alert.id)).toEqual(['tw1-0000000000000002', 'tw1-0000000000000001']);
    expect(episodes[1]!.alert.state).toBe('closed');
    expect(episodes[1]!.endMs - episodes[1]!.startMs).toBe(240_000);
  });

  it('reports lines that are not alerts with their line number and byte offset, and reads on', () => {
    const text = ['{not json', alert({ kind: 'port-knock' }), alert({ observed: 'many' }), alert({})].join('\n');
    const { episodes, problems } = parseAlerts(text, 'a.jsonl');
    expect(episodes).toHaveLength(1);
    expect(problems.map((p) => [p.line, p.message])).toEqual([
      [1, 'not JSON'], [2, 'unknown kind port-knock'], [3, 'observed is not a number'],
    ]);
    expect(problems[1]!.offset).toBe(Buffer.byteLength('{not json\n'));
  });
});
