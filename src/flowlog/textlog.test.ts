import { describe, expect, it } from 'vitest';
import { ingestCsv, ingestJsonl, MAX_LINE_BYTES } from './textlog.js';
import { runIngest } from './testing.js';

const enc = (s: string) => new TextEncoder().encode(s);

describe('CSV flow logs', () => {
  it('maps a header of FlowRecord names and IPFIX IE names, RFC 4180 quoting (csv-parse)', async () => {
    const csv = [
      'start,end,proto,src,dst,sport,dport,pkts,bytes,rpkts,rbytes,flags,rflags',
      '1700000000,1700000001.5,tcp,192.0.2.1,198.51.100.2,40000,443,10,1000,8,9000,27,27',
      '"1700000002000",1700000003000,17,"2001:DB8::1",2001:db8:0:0::2,5353,53,1,80,0,0,,',
      '2023-11-14T22:13:20.250Z,,icmp,::ffff:203.0.113.7,192.0.2.9,0,771,1,56,0,0,,',
    ].join('\r\n') + '\r\n';
    const { recs, problems } = await runIngest(ingestCsv, enc(csv), 16, 'log.csv');
    expect(problems).toEqual([]);
    expect(recs).toHaveLength(3);
    // seconds vs ms by magnitude; proto names; RFC 5952 text; IPv4-mapped -> IPv4 (src/flow/record.ts)
    expect(recs[0]).toMatchObject({ start: 1_700_000_000_000, end: 1_700_000_001_500, proto: 6, outcome: 'established', exporter: 'log.csv' });
    expect(recs[1]).toMatchObject({ start: 1_700_000_002_000, src: '2001:db8::1', dst: '2001:db8::2', outcome: 'unanswered' });
    // RFC 3339 timestamp; ICMP: sport 0, dport type*256+code (771 = 3/3, METHODS check value 15)
    expect(recs[2]).toMatchObject({ start: 1_700_000_000_250, end: 1_700_000_000_250, proto: 1, src: '203.0.113.7', sport: 0, dport: 771, outcome: 'n/a' });
  });

  it('IPFIX IE names as columns', async () => {
    const csv = 'flowStartMilliseconds,protocolIdentifier,sourceIPv4Address,destinationIPv4Address,sourceTransportPort,destinationTransportPort,packetDeltaCount,octetDeltaCount,tcpControlBits\n'
      + '1700000000000,6,10.0.0.1,10.0.0.2,1234,80,3,180,2\n';
    const { recs } = await runIngest(ingestCsv, enc(csv));
    // one-way record, SYN only: unanswered (docs/flow-inputs.md outcome rules, ours)
    expect(recs[0]).toMatchObject({ src: '10.0.0.1', dport: 80, pkts: 3, bytes: 180, flags: 2, outcome: 'unanswered', rpkts: 0 });
  });

  it('reports bad lines with their 1-based line number and goes on', async () => {
    const csv = 'start,proto,src,dst\n1700000000,6,192.0.2.1,192.0.2.2\n1700000000,6,not-an-address,192.0.2.2\nsoon,6,192.0.2.1,192.0.2.2\n1700000000,6,192.0.2.3,192.0.2.4\n';
    const { recs, problems } = await runIngest(ingestCsv, enc(csv));
    expect(recs.map((r) => r.src)).toEqual(['192.0.2.1', '192.0.2.3']);
    expect(problems.map((p) => [p.line, p.reason])).toEqual([[3, 'bad-line'], [4, 'bad-line']]);
  });

  it('a line of more than 1 MiB is reported and skipped, not buffered (hostile input)', async () => {
    const long = 'x'.repeat(MAX_LINE_BYTES + 10);
    const csv = `start,proto,src,dst\n1700000000,6,192.0.2.1,192.0.2.2\n1700000000,6,${long},192.0.2.2\n"${long}\n1700000001,6,192.0.2.5,192.0.2.6\n`;
    const { recs, problems } = await runIngest(ingestCsv, enc(csv), 64 * 1024);
    expect(problems.map((p) => [p.line, p.reason])).toEqual([[3, 'line-too-long'], [4, 'line-too-long']]);
    expect(recs.map((r) => r.src)).toEqual(['192.0.2.1', '192.0.2.5']);
  });
});

describe('JSON Lines flow logs', () => {
  it('FlowRecord names and IPFIX names, reverse counters, a bad line and a blank line (jsonlines.org: invalid)', async () => {
    const lines = [
      JSON.stringify({ start: 1_700_000_000_000, end: 1_700_000_000_500, proto: 'udp', src: '192.0.2.1', dst: '192.0.2.53', sport: 999, dport: 53, pkts: 1, bytes: 70, rpkts: 1, rbytes: 130 }),
      '{"start": 17000',
      '',
      JSON.stringify({ flowStartSeconds: 1_700_000_000, protocolIdentifier: 6, sourceIPv6Address: '2001:db8::a', destinationIPv6Address: '2001:db8::b',
        sourceTransportPort: 1, destinationTransportPort: 22, packetDeltaCount: 2, octetDeltaCount: 100, reversePacketDeltaCount: 1,
        reverseOctetDeltaCount: 40, tcpControlBits: 2, reverseTcpControlBits: 0x14, vlanId: 7 }),
    ].join('\n');
    const { recs, problems } = await runIngest(ingestJsonl, enc(lines), 7, 'flows.jsonl');
    expect(problems.map((p) => [p.line, p.reason])).toEqual([[2, 'bad-json'], [3, 'bad-json']]);
    expect(recs[0]).toMatchObject({ proto: 17, outcome: 'established', exporter: 'flows.jsonl' });
    // RST from the responder -> rejected (docs/flow-inputs.md outcome rules, ours)
    expect(recs[1]).toMatchObject({ start: 1_700_000_000_000, src: '2001:db8::a', rpkts: 1, rflags: 0x14, outcome: 'rejected', vlan: 7 });
  });

  it('initiator/responder counters and running totals by their IPFIX names (IANA registry: 231, 232, 298, 299, 85, 86)', async () => {
    const base = { flowStartMilliseconds: 1_700_000_000_000, protocolIdentifier: 17, sourceIPv4Address: '192.0.2.1', destinationIPv4Address: '192.0.2.53' };
    const lines = [
      JSON.stringify({ ...base, initiatorPackets: 2, initiatorOctets: 150, responderPackets: 1, responderOctets: 300 }),
      JSON.stringify({ ...base, packetTotalCount: 9, octetTotalCount: 900 }),
      // a delta counter wins over a total, in either column order
      JSON.stringify({ ...base, octetTotalCount: 99_999, octetDeltaCount: 120, packetDeltaCount: 1 }),
    ].join('\n');
    const { recs, problems } = await runIngest(ingestJsonl, enc(lines));
    expect(problems).toEqual([]);
    expect(recs[0]).toMatchObject({ pkts: 2, bytes: 150, rpkts: 1, rbytes: 300, outcome: 'established' });
    expect(recs[1]).toMatchObject({ pkts: 9, bytes: 900, outcome: 'n/a' });
    expect(recs[2]).toMatchObject({ pkts: 1, bytes: 120 });
  });
});
