import { mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { formatStatusLine, STATUS_SCHEMA, writeStatusJson, type LiveStatus } from './status.js';

const dir = mkdtempSync(join(tmpdir(), 'tidewatch-status-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const status = (o: Partial<LiveStatus> = {}): LiveStatus => ({
  schema: STATUS_SCHEMA, time: '2026-03-10T09:00:10.000Z', uptime_s: 10, event_time: '2026-03-10T09:00:09.000Z',
  listening: { ipfix_udp: '127.0.0.1:4739' }, records: 1000, records_per_s: 100, windows_closed: 3, hosts_tracked: 12,
  addresses: 20, alerts: 2, drops: { late_records: 1, syslog: 2, sequence_lost: 3, collector_backlog: 0, malformed: 4 },
  memory: { rss_mb: 80, heap_used_mb: 20 }, sources: {}, syslog: [], rules: { files: 1, reloads: 0, refused: 0 }, final: false, ...o,
});

describe('status', () => {
  it('one stderr line with records/s, windows closed, hosts, alerts, drops and memory', () => {
    expect(formatStatusLine(status())).toBe('status: 100 records/s, 3 windows closed, 12 hosts tracked, 2 alerts, '
      + '6 drops (late 1, syslog 2, lost by sequence 3, backlog 0), 4 malformed, rss 80 MB, event time 2026-03-10T09:00:09.000Z');
  });

  it('--status-json is written whole and renamed into place, leaving no temporary file', () => {
    const f = join(dir, 'status.json');
    writeStatusJson(f, status());
    writeStatusJson(f, status({ records: 2000 }));
    expect((JSON.parse(readFileSync(f, 'utf8')) as LiveStatus).records).toBe(2000);
    expect(readdirSync(dir)).toEqual(['status.json']);
  });
});
