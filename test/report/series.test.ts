import { describe, expect, it } from 'vitest';
import type { Alert } from '../../src/alert/alert.js';
import type { HostContext } from '../../src/detect/context.js';
import type { Finding } from '../../src/detect/finding.js';
import { latestEpisodes } from '../../src/report/alerts-file.js';
import { CONTEXT_WINDOWS, MAX_CHARTED_PAIRS, SeriesRecorder } from '../../src/report/series.js';
import { F, FEATURE_COUNT } from '../../src/window/features.js';

const W = 60_000;
const T0 = Date.UTC(2026, 2, 10, 9, 0);

function alert(host: string, feature: string, startMin: number, endMin: number, id: string): Alert {
  return {
    schema: 'tidewatch.alert/1', id, kind: 'volume-surge', severity: 'high', host, role: 'source',
    start: new Date(T0 + startMin * W).toISOString(), end: new Date(T0 + endMin * W).toISOString(), state: 'closed',
    feature, observed: 9e6, expected: 1e4, low: 100, high: 5e4, score: 9,
    evidence: { top_peers: [], top_ports: [], sample_flows: [], flows: 1, packets: 1, bytes: 1 }, rule: 'volume-surge/band', sensor: 't',
  };
}

/** A host-window as the engine hands it to the observer; the band is ready from minute 10 on. */
function ctx(host: string, minute: number, value: number): HostContext {
  const values = new Float64Array(FEATURE_COUNT);
  values[F.bytes_out] = value;
  values[F.distinct_dst_ports] = value;
  const model = {
    band: (f: number) => (f === F.bytes_out
      ? { expected: 1000, low: 500, high: 2000, spread: 1, ready: minute >= 10, seasonal: false } : null),
  };
  return { host, hostId: 1, windowStart: T0 + minute * W, values, model, thresholds: { z: 3 } } as unknown as HostContext;
}

describe('SeriesRecorder', () => {
  it('records only the alerted pairs, an episode plus context either side, with the band where it was ready', () => {
    const eps = latestEpisodes([alert('10.60.1.5', 'bytes_out', 100, 105, 'a')]);
    const r = new SeriesRecorder(eps, W);
    for (let m = 0; m < 300; m++) {
      r.observer(ctx('10.60.1.5', m, m === 102 ? 9e6 : 1000), []);
      r.observer(ctx('10.60.1.6', m, 7), []); // not alerted: never recorded
    }
    const [s, ...rest] = r.series(T0, T0 + 300 * W);
    expect(rest).toEqual([]);
    expect(s!.host).toBe('10.60.1.5');
    expect(s!.startMs).toBe(T0 + (100 - CONTEXT_WINDOWS) * W);
    expect(s!.observed.length).toBe(5 + 2 * CONTEXT_WINDOWS);
    expect(s!.observed[CONTEXT_WINDOWS + 2]).toBe(9e6);
    expect(s!.high[0]).toBe(2000);
    expect(s!.bandFrom).toBe('baseline');
  });

  it('merges overlapping stretches, clips them to the input, and uses the rule band for features without a baseline', () => {
    const eps = latestEpisodes([
      alert('10.60.1.5', 'distinct_dst_ports', 5, 6, 'a'), alert('10.60.1.5', 'distinct_dst_ports', 30, 31, 'b'),
    ]);
    const r = new SeriesRecorder(eps, W);
    const finding = { feature: 'distinct_dst_ports', expected: 3, low: 0, high: 40 } as Finding;
    for (let m = 0; m < 50; m++) r.observer(ctx('10.60.1.5', m, m === 5 ? 900 : 2), m === 5 ? [finding] : []);
    const all = r.series(T0, T0 + 50 * W);
    expect(all).toHaveLength(1);
    const s = all[0]!;
    expect(s.startMs).toBe(T0);
    expect(s.observed.length).toBe(50);
    expect(s.bandFrom).toBe('rule');
    expect(s.high[5]).toBe(40); // the finding's band
    expect(s.high[20]).toBe(5e4); // elsewhere the latest alert's
  });

  it('names alert features that are not window features instead of charting them', () => {
    const r = new SeriesRecorder(latestEpisodes([alert('10.60.1.5', 'no_such_feature', 1, 2, 'a')]), W);
    expect([...r.unknownFeatures]).toEqual(['no_such_feature']);
    expect(r.series(T0, T0 + W)).toEqual([]);
  });
});

describe('SeriesRecorder bounds', () => {
  it(`charts at most ${MAX_CHARTED_PAIRS} (host, feature) pairs, the highest scores first`, () => {
    const alerts = Array.from({ length: MAX_CHARTED_PAIRS + 5 }, (_, i) => ({ ...alert(`10.60.${i >> 8}.${i & 255}`, 'bytes_out', 1, 2, `id${i}`), score: i }));
    const r = new SeriesRecorder(latestEpisodes(alerts), W);
    expect(r.omittedPairs).toBe(5);
    for (let i = 0; i < alerts.length; i++) r.observer(ctx(alerts[i]!.host, 1, 1), []);
    const hosts = new Set(r.series(T0, T0 + 10 * W).map((s) => s.host));
    expect(hosts.size).toBe(MAX_CHARTED_PAIRS);
    expect(hosts.has(alerts[0]!.host)).toBe(false); // the lowest scores go first
    expect(hosts.has(alerts[MAX_CHARTED_PAIRS + 4]!.host)).toBe(true);
  });
});
