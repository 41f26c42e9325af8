import { describe, expect, it } from 'vitest';
import type { Alert } from '../../src/alert/alert.js';
import { explain } from '../../src/alert/explain.js';
import type { ReportData } from '../../src/report/data.js';
import { renderReport } from '../../src/report/html.js';
import { KIND_LOOK, SERIES } from '../../src/report/svg/palette.js';

const T0 = Date.UTC(2026, 2, 10, 9, 0);

function alert(over: Partial<Alert>): Alert {
  return {
    schema: 'tidewatch.alert/1', id: 'tw1-00000000000000a1', kind: 'vertical-scan', severity: 'medium', host: '10.60.2.14',
    role: 'source', start: '2026-03-10T09:15:00.000Z', end: '2026-03-10T09:19:00.000Z', state: 'closed',
    feature: 'max_ports_per_peer', observed: 812, expected: 2, low: 0, high: 4, score: 6.7,
    evidence: { top_peers: [{ peer: '10.60.0.5', count: 812 }], top_ports: [{ port: 22, count: 3 }], sample_flows: [], flows: 812, packets: 1624, bytes: 64_960, failure_ratio: 0.97, window_s: 60 },
    rule: 'vertical-scan/prior', sensor: 'test', ...over,
  };
}

function data(alerts: Alert[]): ReportData {
  const n = 60;
  const observed = Float64Array.from({ length: n }, (_, i) => (i >= 15 && i < 19 ? 812 : 1));
  return {
    title: 'Test <report>', generatedMs: T0 + 3_600_000, windowMs: 60_000, spanStartMs: T0, spanEndMs: T0 + 3_600_000,
    inputs: [{ file: 'c.pcap', format: 'pcap', units: 5000, unitName: 'packets', bytes: 1e6, flows: 900 }],
    addresses: 40, activeHosts: 12, insideHosts: 9, flows: 900, alerts,
    series: [{
      host: '10.60.2.14', feature: 'max_ports_per_peer', startMs: T0, stepMs: 60_000, observed,
      expected: new Float64Array(n).fill(2), low: new Float64Array(n).fill(0), high: new Float64Array(n).fill(4), bandFrom: 'rule', pointWindows: 1,
    }],
    notes: ['a note & more'],
  };
}

/** WCAG 2 relative luminance of an sRGB colour (W3C WCAG 2.1, definition of relative luminance). */
function luminance(hex: string): number {
  const [r, g, b] = [1, 3, 5].map((i) => parseInt(hex.slice(i, i + 2), 16) / 255)
    .map((c) => (c <= 0.03928 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4));
  return 0.2126 * r! + 0.7152 * g! + 0.0722 * b!;
}

describe('renderReport', () => {
  const two = [alert({}), alert({ id: 'tw1-00000000000000a2', kind: 'volume-surge', feature: 'bytes_out', severity: 'critical', host: '2001:db8:60::5', start: '2026-03-10T09:40:00.000Z', end: '2026-03-10T09:44:00.000Z' })];
  const html = renderReport(data(two));

  it('is one self-contained page: no scripts, no external references, fetching forbidden by its policy', () => {
    expect(html.startsWith('<!DOCTYPE html>')).toBe(true);
    expect(html).not.toMatch(/<script/i);
    expect(html).not.toMatch(/(src|href)="(?!#)/); // only in-page anchors
    expect(html).not.toMatch(/url\((?!#)/); // only in-page patterns
    expect(html).toContain("default-src 'none'");
  });

  it('has the summary, the timeline, a section per alerted host with its explanation and evidence', () => {
    expect(html).toContain('<title>Test &lt;report&gt;</title>');
    expect(html).toContain('a note &amp; more');
    expect(html).toContain('<svg class="timeline"');
    expect(html).toContain('id="host-10-60-2-14"');
    expect(html).toContain('id="host-2001-db8-60-5"');
    for (const a of two) expect(html).toContain(`<p class="explain">${explain(a).replace(/'/g, '&#39;')}</p>`);
    expect(html).toContain('<td class="mono">10.60.0.5</td>');
    expect(html).toMatch(/<tr><td>vertical-scan<\/td><td class="n"><\/td><td class="n"><\/td><td class="n">1<\/td>/);
  });

  it('charts the series with every series named in the legend', () => {
    const chart = html.slice(html.indexOf('<svg class="chart"'), html.indexOf('</svg>', html.indexOf('<svg class="chart"')));
    expect(chart).toContain('class="observed"');
    for (const label of ['observed', 'expected', 'normal band (detector rule)', 'alert episode']) expect(chart).toContain(`>${label}</text>`);
    expect(chart).toContain('max_ports_per_peer (log scale)'); // 1 .. 812: a wide count range
  });

  it('reads "No alerts" when there are none', () => {
    expect(renderReport({ ...data([]), series: [] })).toContain('No alerts were raised.');
  });
});

describe('palette in greyscale', () => {
  it('observed, expected and band differ in lightness as well as in dash', () => {
    // thresholds: common practice, no source (dark line on a pale band, mid-grey dashed between)
    const ob = luminance(SERIES.observed.stroke), ex = luminance(SERIES.expected.stroke), band = luminance(SERIES.band.fill);
    expect(ob).toBeLessThan(0.1);
    expect(ex).toBeGreaterThan(ob + 0.1);
    expect(band).toBeGreaterThan(ex + 0.4);
    expect(SERIES.observed.dash).not.toBe(SERIES.expected.dash);
  });

  it('every alert kind has a fill pattern of its own, and the solid one is among the darkest', () => {
    const looks = Object.values(KIND_LOOK);
    expect(new Set(looks.map((l) => l.pattern)).size).toBe(looks.length);
    // and the solid one is the darkest, so it never reads as an empty bar
    const solid = looks.find((l) => l.pattern === 'solid')!;
    expect(luminance(solid.colour)).toBeLessThan(Math.min(...looks.filter((l) => l !== solid).map((l) => luminance(l.colour))) + 0.05);
  });
});
