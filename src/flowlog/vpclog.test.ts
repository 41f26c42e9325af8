import { describe, expect, it } from 'vitest';
import { sniffFormat } from '../ingest/sniff.js';
import { runIngest } from './testing.js';
import { ingestVpcFlowLog } from './vpclog.js';

const enc = (s: string) => new TextEncoder().encode(s);

// The default-format records are the examples of the AWS VPC User Guide, "Flow log record examples"
// (accepted SSH, rejected RDP, no data); the layout and field meanings are its "Flow log records"
// page. Records with a header line are made up here in the same layout.
const ACCEPTED = '2 123456789010 eni-1235b8ca123456789 172.31.16.139 172.31.16.21 20641 22 6 20 4249 1418530010 1418530070 ACCEPT OK';
const REJECTED = '2 123456789010 eni-1235b8ca123456789 172.31.9.69 172.31.9.12 49761 3389 6 20 4249 1418530010 1418530070 REJECT OK';
const NO_DATA = '2 123456789010 eni-1235b8ca123456789 - - - - - - - 1431280876 1431280934 - NODATA';

describe('VPC flow logs', () => {
  it('reads default-format records without a header: one-way records, epoch seconds, REJECT as rejected', async () => {
    const { recs, problems, summary } = await runIngest(ingestVpcFlowLog, enc(`${ACCEPTED}\n${REJECTED}\n${NO_DATA}\n`), 16, 'eni.log');
    expect(problems).toEqual([]);
    expect(recs).toHaveLength(2);
    expect(recs[0]).toMatchObject({
      src: '172.31.16.139', dst: '172.31.16.21', sport: 20641, dport: 22, proto: 6, pkts: 20, bytes: 4249,
      rpkts: 0, rbytes: 0, start: 1_418_530_010_000, end: 1_418_530_070_000, exporter: 'eni.log/eni-1235b8ca123456789',
    });
    // no tcp-flags in the default layout: a one-way TCP record without flags says nothing of an answer
    // (docs/flow-inputs.md outcome rules, ours)
    expect(recs[0]!.outcome).toBe('n/a');
    // a rejected TCP record of the default layout (no tcp-flags) counts as a connection attempt (ours)
    expect(recs[1]).toMatchObject({ src: '172.31.9.69', dport: 3389, outcome: 'rejected', flags: 2 });
    expect(summary.counters).toMatchObject({ noDataRecords: 1, skippedDataRecords: 0, flows: 2 });
  });

  it('takes the layout from a header line: custom fields, tcp-flags, packet addresses, IPv6, dashes', async () => {
    const log = [
      'version interface-id srcaddr dstaddr pkt-srcaddr pkt-dstaddr srcport dstport protocol packets bytes start end action log-status tcp-flags',
      '5 eni-0a 10.40.0.5 203.0.113.9 10.40.7.7 203.0.113.9 50100 443 6 12 5100 1700000000 1700000059 ACCEPT OK 19',
      '5 eni-0a 2001:db8:40::5 2001:db8:99::1 - - 0 0 58 2 208 1700000000 1700000001 ACCEPT OK -',
      '5 eni-0a 10.40.0.5 198.51.100.1 - - 40000 53 17 1 70 1700000005 1700000005 ACCEPT SKIPDATA -',
    ].join('\n');
    const { recs, problems, summary } = await runIngest(ingestVpcFlowLog, enc(log), 7, 'custom.log');
    expect(problems).toEqual([]);
    // pkt-srcaddr names the packet's own source (behind the NAT interface)
    expect(recs[0]).toMatchObject({ src: '10.40.7.7', dst: '203.0.113.9', flags: 19, outcome: 'established', exporter: 'custom.log/eni-0a' });
    // ICMPv6: sport 0; RFC 5952 text
    expect(recs[1]).toMatchObject({ proto: 58, src: '2001:db8:40::5', sport: 0, outcome: 'n/a' });
    expect(recs).toHaveLength(2);
    expect(summary.counters).toMatchObject({ skippedDataRecords: 1 });
  });

  it('a record with another field count is reported with its line and skipped', async () => {
    const log = `${ACCEPTED}\n2 123456789010 eni-1 172.31.16.139 172.31.16.21 1 2 6\n${REJECTED}\n`;
    const { recs, problems } = await runIngest(ingestVpcFlowLog, enc(log), 5);
    expect(recs).toHaveLength(2);
    expect(problems.map((p) => [p.line, p.reason])).toEqual([[2, 'bad-line']]);
    expect(problems[0]!.message).toMatch(/8 fields where the default layout has 14/);
  });

  it('is sniffed by its header or a default-format first record, not taken for CSV', () => {
    expect(sniffFormat(enc('version account-id interface-id srcaddr dstaddr srcport dstport protocol packets bytes start end action log-status\n'))).toBe('vpc-flowlog');
    expect(sniffFormat(enc(`${ACCEPTED}\n`))).toBe('vpc-flowlog');
    expect(sniffFormat(enc(NO_DATA))).toBe('vpc-flowlog');
    expect(sniffFormat(enc('start,end,proto,src,dst\n'))).toBe('csv');
    expect(sniffFormat(enc('2 3 4\n'))).toBeNull();
  });
});
