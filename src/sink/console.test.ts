import { describe, expect, it } from 'vitest';
import type { Alert } from '../alert/alert.js';
import { ConsoleSink, escapeControls, formatConsoleLine, wantsColor } from './console.js';

const alert: Alert = {
  schema: 'tidewatch.alert/1', id: 'tw1-0123456789abcdef', kind: 'vertical-scan', severity: 'critical',
  host: '10.60.2.14', role: 'source', start: '2024-05-06T07:00:00.000Z', end: '2024-05-06T07:01:00.000Z',
  state: 'open', feature: 'max_ports_per_peer', observed: 812, expected: 1, low: 0, high: 4, score: 40,
  evidence: { top_peers: [{ peer: '10.60.0.5', count: 812 }], top_ports: [], sample_flows: [], flows: 812, packets: 812, bytes: 35728, window_s: 60 },
  rule: 'scan.vertical', sensor: 's',
};

describe('console sink', () => {
  it('prints time, severity word, kind, host, state and the explanation; plain without colour', () => {
    expect(formatConsoleLine(alert, false)).toBe(
      '2024-05-06T07:01:00.000Z CRITICAL vertical-scan 10.60.2.14 open: 10.60.2.14 contacted 812 distinct ports on 10.60.0.5 in 60 s; its normal is 0 to 4.');
  });

  it('colours with ANSI SGR sequences when asked (ECMA-48)', () => {
    const line = formatConsoleLine(alert, true);
    expect(line).toContain('\x1b[41m'); // red background for critical
    expect(line.replace(/\x1b\[[0-9;]*m/g, '')).toBe(formatConsoleLine(alert, false));
  });

  it('honours NO_COLOR (no-color.org: any non-empty value) and the color option', () => {
    expect(wantsColor({ env: {} })).toBe(true);
    expect(wantsColor({ env: { NO_COLOR: '1' } })).toBe(false);
    expect(wantsColor({ env: { NO_COLOR: '' } })).toBe(true);
    expect(wantsColor({ color: false, env: {} })).toBe(false);
    let out = '';
    new ConsoleSink({ write: (s: string) => ((out += s), true) } as NodeJS.WritableStream, { env: { NO_COLOR: 'x' } }).write(alert);
    expect(out).not.toContain('\x1b');
    expect(out.endsWith('\n')).toBe(true);
  });

  it('escapes C0, DEL, C1 controls and line separators from data', () => {
    expect(escapeControls('a\x1b[2Jb\nc\x7fd\x9be\u2028f')).toBe('a\\x1b[2Jb\\x0ac\\x7fd\\x9be\\u2028f');
    const line = formatConsoleLine({ ...alert, host: 'evil\x1b]0;title\x07' }, false);
    expect(line).not.toMatch(/[\x00-\x1f\x7f-\x9f]/);
  });
});
