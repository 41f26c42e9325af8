import { describe, expect, it } from 'vitest';
import { canonicalKey, missingColumns, parseTcpFlags } from './columns.js';
import { parseTimestamp } from './row.js';
import { headerSeparator, ingestCsv, ingestJsonl } from './textlog.js';
import { runIngest } from './testing.js';

const enc = (s: string) => new TextEncoder().encode(s);

describe('flow-log column names', () => {
  it('plain names, IPFIX names and FlowRecord names, compared without case or separators (common practice, no source)', () => {
    expect(['Src IP', 'src_ip', 'srcIp', 'SRC-ADDR', 'saddr', 'sourceIPv4Address', 'src'].map(canonicalKey)).toEqual(Array(7).fill('src'));
    expect(['Dst Port', 'dest_port', 'destinationTransportPort', 'DPT'].map(canonicalKey)).toEqual(Array(4).fill('dport'));
    expect(['Protocol', 'proto', 'protocolIdentifier'].map(canonicalKey)).toEqual(['proto', 'proto', 'proto']);
    expect(['Start Time', 'first_seen', 'flowStartSeconds'].map(canonicalKey)).toEqual(['start', 'start', 'start']);
    // a bare timestamp only stands in for a start time; running totals only for delta counters
    expect([canonicalKey('timestamp'), canonicalKey('octetTotalCount')]).toEqual(['start~', 'bytes~']);
    // unknown names come back trimmed (and are ignored); NetFlow v5's First/Last are uptime, not epoch: not taken
    expect([canonicalKey(' Label '), canonicalKey('First'), canonicalKey('Last')]).toEqual(['Label', 'First', 'Last']);
    // forward and backward counters; a flow duration of unknown unit is not read
    expect(['Total Fwd Packets', 'Total Backward Packets', 'Total Length of Fwd Packets', 'TotLen Bwd Pkts', 'Flow Duration'].map(canonicalKey))
      .toEqual(['pkts', 'rpkts', 'bytes', 'rbytes', 'Flow Duration']);
  });

  it('a header must name an address each way, a protocol and a time', () => {
    expect(missingColumns(['src', 'dst', 'proto', 'start~'])).toBeNull();
    expect(missingColumns(['dst', 'proto', 'end'])).toMatch(/^no column names a source address \(src, src_ip, sourceIPv4Address, \.\.\.\)/);
    expect(missingColumns(['foo'])).toMatch(/source address.*destination address.*protocol.*time/);
  });

  it('TCP flags as numbers, letters or names (RFC 9293 section 3.1 bit order; ECE, CWR: RFC 3168 section 23.2)', () => {
    expect(['27', '0x1b', '0X12', 'SA', '.AP.SF', '...A..S.', 'SYN,ACK', 'syn|ack', 'FIN PSH ACK', 'ECE', 'EC', 'CWR', ''].map(parseTcpFlags))
      .toEqual([27, 27, 0x12, 0x12, 0x1b, 0x12, 0x12, 0x12, 0x19, 0x40, 0xc0, 0x80, 0]);
    for (const bad of ['SYN,BOGUS', 'SAX', 'ACKS']) expect(parseTcpFlags(bad)).toBeNaN();
  });

  it('epoch timestamps by magnitude: seconds, milliseconds, microseconds, nanoseconds; zone-less text as UTC (RFC 3339 section 5.6 allows the space)', () => {
    const ms = 1_773_133_202_975; // 2026-03-10T09:00:02.975Z
    expect([parseTimestamp(ms / 1000), parseTimestamp(ms), parseTimestamp(ms * 1000), parseTimestamp(`${ms}000000`)]).toEqual([ms, ms, ms, ms]);
    expect(parseTimestamp('2026-03-10 09:00:02.975')).toBe(ms);
    expect(parseTimestamp('2026-03-10T10:00:02.975+01:00')).toBe(ms);
    expect(parseTimestamp('2026/03/10 09:00:02.975')).toBe(ms);
    // a date alone, and day-first or month-first dates, are ambiguous or not a time: not read
    for (const bad of ['2026-03-10', '10/03/2026 09:00:02', '03/10/2026 09:00:02']) expect(parseTimestamp(bad)).toBeNaN();
  });

  it('the header line decides the separator: commas, semicolons, tabs or bars, not inside quotes', () => {
    expect(['a,b,c', 'a;b;c', 'a\tb\tc', 'a|b|c', '"x;y;z",b,c', 'single'].map(headerSeparator)).toEqual([',', ';', '\t', '|', ',', ',']);
  });
});

describe('flow logs with plain column names', () => {
  it('a semicolon-separated export: zone-less times, a duration in seconds, flags as letters and names', async () => {
    const csv = [
      'Start Time;Duration;Protocol;Src IP;Src Port;Dst IP;Dst Port;Packets;Bytes;TCP Flags',
      '2026-03-10 09:00:02.975;1.5;TCP;192.0.2.10;50000;198.51.100.20;443;12;4200;.AP.SF',
      '2026-03-10 09:00:03.000;0;tcp;192.0.2.10;50001;198.51.100.21;22;1;60;SYN',
      '2026-03-10 09:00:04.000;0.2;ICMP6;2001:db8::1;0;2001:db8::2;0;1;64;',
    ].join('\n') + '\n';
    const { recs, problems } = await runIngest(ingestCsv, enc(csv), 13, 'export.csv');
    expect(problems).toEqual([]);
    const t0 = Date.UTC(2026, 2, 10, 9, 0, 2, 975);
    expect(recs[0]).toMatchObject({ start: t0, end: t0 + 1500, proto: 6, src: '192.0.2.10', sport: 50000, dst: '198.51.100.20', dport: 443, pkts: 12, bytes: 4200, flags: 0x1b });
    // one-way SYN only: unanswered (docs/flow-inputs.md outcome rules, ours)
    expect(recs[1]).toMatchObject({ flags: 0x02, outcome: 'unanswered' });
    expect(recs[2]).toMatchObject({ proto: 58, src: '2001:db8::1', end: Date.UTC(2026, 2, 10, 9, 0, 4, 200) });
  });

  it('tab-separated, epoch microseconds, end and IPFIX duration in milliseconds', async () => {
    const tsv = 'ts\tflowDurationMilliseconds\tproto\tsaddr\tdaddr\tsport\tdport\tpkts\tbytes\n1700000000250000\t750\tudp\t10.1.2.3\t10.1.2.4\t5353\t53\t1\t80\n';
    const { recs, problems } = await runIngest(ingestCsv, enc(tsv));
    expect(problems).toEqual([]);
    expect(recs[0]).toMatchObject({ start: 1_700_000_000_250, end: 1_700_000_001_000, proto: 17, src: '10.1.2.3', dport: 53 });
  });

  it('JSON Lines with plain keys', async () => {
    const line = JSON.stringify({ timestamp: '2026-03-10T09:00:00Z', src_ip: '192.0.2.1', dst_ip: '192.0.2.2', protocol: 'UDP', dst_port: 123, bytes: 76, packets: 1 });
    const { recs, problems } = await runIngest(ingestJsonl, enc(line));
    expect(problems).toEqual([]);
    expect(recs[0]).toMatchObject({ start: Date.UTC(2026, 2, 10, 9), proto: 17, src: '192.0.2.1', dport: 123, bytes: 76 });
  });

  it('a header naming no address columns stops the file with one line naming it, not an error per line', async () => {
    const csv = '\nhost,when,count\nalpha,1700000000,3\nbeta,1700000001,4\n';
    const problems: unknown[] = [];
    await expect(runIngest(ingestCsv, enc(csv), 64, 'inventory.csv').then((r) => problems.push(...r.problems)))
      .rejects.toThrow(/^inventory\.csv: line 2: not a flow log: no column names a source address \(src, .*a protocol .*$/);
    expect(problems).toEqual([]);
  });
});

describe('JSON Lines with nested objects', () => {
  it('keys of nested objects count by their own name, and never replace an outer key (common practice, no source)', async () => {
    const line = JSON.stringify({
      src: '192.0.2.99',
      payload: { connection: { src_ip: '192.0.2.1', dest_ip: '198.51.100.2', src_port: 40000, dest_port: 443, protocol: 6 },
        start_time: '2026-03-10T09:00:00Z', end_time: '2026-03-10T09:00:05Z', bytes_sent: '5000', packets_sent: '8' },
    });
    const { recs, problems } = await runIngest(ingestJsonl, enc(line));
    expect(problems).toEqual([]);
    expect(recs[0]).toMatchObject({ src: '192.0.2.99', dst: '198.51.100.2', dport: 443, proto: 6, bytes: 5000, pkts: 8, end: Date.UTC(2026, 2, 10, 9, 0, 5) });
  });
});

describe('hostile CSV headers (fast-check)', () => {
  it('any header either reads or stops the file with one line naming it', async () => {
    const fc = (await import('fast-check')).default;
    const part = fc.oneof(fc.string({ maxLength: 12 }), fc.constantFrom('"', '""', 'src', 'dst', 'proto', 'start', ';', '\t', '|', ',', '\ufeff', '"a\nb"'));
    await fc.assert(fc.asyncProperty(fc.array(part, { maxLength: 8 }), async (parts) => {
      const text = `${parts.join('')}\n1700000000,6,192.0.2.1,192.0.2.2\n`;
      try {
        await runIngest(ingestCsv, enc(text), 7, 'h.csv');
      } catch (e) {
        expect((e as Error).message).toMatch(/^h\.csv: line \d+: not a flow log: [^\n]+$/);
      }
    }), { numRuns: 300 });
  });
});
