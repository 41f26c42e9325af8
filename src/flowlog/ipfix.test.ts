import { describe, expect, it } from 'vitest';
import type { FlowRecord } from '../flow/record.js';
import type { InputProblem } from '../util/problem.js';
import { ingestIpfix } from './file-ingest.js';
import { IpfixDecoder } from './ipfix.js';
import { LIMITS, TemplateBudget } from './session.js';
import { concat, ipfixMessage, ipfixSet, runIngest, templateRecord, Wire } from './testing.js';

function hex(s: string): Uint8Array {
  const t = s.replace(/#[^\n]*/g, '').replace(/\s+/g, '');
  return Uint8Array.from(t.match(/../g)!.map((x) => parseInt(x, 16)));
}

function decoder(label = 'test') {
  const recs: FlowRecord[] = [];
  const problems: InputProblem[] = [];
  const dec = new IpfixDecoder('test.ipfix', label, (r) => recs.push(r), new TemplateBudget(), (p) => problems.push(p));
  const feed = (m: Uint8Array) => dec.decodeMessage(m, 0, m.length, 0);
  return { dec, recs, problems, feed };
}

describe('IPFIX message decoding', () => {
  it('decodes a message hand-encoded from the layout figures of RFC 7011 section 3', () => {
    // RFC 7011 section 3.1 (Message Header), 3.3.2 (Set Header), 3.4.1 (Template Record with Field
    // Specifiers of section 3.2), 3.4.3 (Data Records): one template set, one data set, one record.
    const msg = hex(`
      000a 0054                # Version 10, Length 84
      6553f100                 # Export Time 1700000000
      00000000                 # Sequence Number 0
      00000007                 # Observation Domain ID 7
      0002 0028                # Set ID 2 (Template Set), Length 40
      0100 0008                # Template ID 256, Field Count 8
      0008 0004  000c 0004     # sourceIPv4Address(8)/4, destinationIPv4Address(12)/4
      0007 0002  000b 0002     # sourceTransportPort(7)/2, destinationTransportPort(11)/2
      0004 0001  0006 0001     # protocolIdentifier(4)/1, tcpControlBits(6)/1
      0002 0004  0001 0004     # packetDeltaCount(2)/4, octetDeltaCount(1)/4 (reduced-size, section 6.2)
      0100 001c                # Set ID 256 (Data Set for template 256), Length 28
      c0000201 c6336402        # 192.0.2.1 -> 198.51.100.2
      9c40 01bb                # 40000 -> 443
      06 1b                    # TCP, flags FIN|SYN|PSH|ACK
      0000000a 00000640        # 10 packets, 1600 octets
      0000                     # 2 octets of padding, shorter than a record (section 3.3.1)
    `);
    expect(msg.length).toBe(84);
    const { recs, problems, feed } = decoder('hand');
    expect(feed(msg)).toBe(84);
    expect(problems).toEqual([]);
    // no time elements: the export time stands for both ends (docs/flow-inputs.md, time precedence)
    expect(recs).toEqual([{
      start: 1_700_000_000_000, end: 1_700_000_000_000, proto: 6, src: '192.0.2.1', dst: '198.51.100.2',
      sport: 40000, dport: 443, pkts: 10, bytes: 1600, rpkts: 0, rbytes: 0, flags: 0x1b, rflags: 0,
      outcome: 'established', exporter: 'hand/7',
    }]);
  });

  const tuple = [[8, 4], [12, 4], [7, 2], [11, 2], [4, 1]] as const;
  const tupleBytes = (src: string, sp: number) => new Wire().ip4(src).ip4('192.0.2.200').u16(sp).u16(53).u8(17).bytes();

  it('variable-length fields: 1-octet and 3-octet length forms (RFC 7011 section 7; METHODS check value 18)', () => {
    const t = ipfixSet(2, templateRecord(300, [[82, 0xffff], ...tuple]));
    const long = new Wire().u8(0xff).u16(300).raw(new Uint8Array(300)).bytes();
    expect(Array.from(long.subarray(0, 3))).toEqual([0xff, 0x01, 0x2c]);
    expect(long.length).toBe(303);
    const d = ipfixSet(300, concat(long, tupleBytes('192.0.2.1', 1), new Wire().u8(2).u16(0x6530).bytes(), tupleBytes('192.0.2.2', 2)));
    const { recs, problems, feed } = decoder();
    feed(ipfixMessage(1, 0, 1_700_000_000, t, d));
    expect(problems).toEqual([]);
    expect(recs.map((r) => [r.src, r.sport])).toEqual([['192.0.2.1', 1], ['192.0.2.2', 2]]);
  });

  it('skips enterprise-specific elements by length, reads RFC 5103 reverse elements (PEN 29305)', () => {
    const t = ipfixSet(2, templateRecord(301, [...tuple, [1, 4, 9999], [2, 4], [2, 4, 29305], [1, 8, 29305]]));
    const d = ipfixSet(301, concat(tupleBytes('192.0.2.1', 7), new Wire().u32(0xdeadbeef).u32(3).u32(2).u64(500).bytes()));
    const { recs, feed } = decoder();
    feed(ipfixMessage(1, 0, 1_700_000_000, t, d));
    // UDP with reverse packets -> established (docs/flow-inputs.md outcome rules)
    expect(recs[0]).toMatchObject({ pkts: 3, bytes: 0, rpkts: 2, rbytes: 500, outcome: 'established' });
  });

  it('sequence numbers count data records before the message, mod 2^32 (RFC 7011 section 3.1, erratum 4396; METHODS check value 19)', () => {
    const t = ipfixSet(2, templateRecord(256, tuple));
    const three = ipfixSet(256, concat(tupleBytes('192.0.2.1', 1), tupleBytes('192.0.2.1', 2), tupleBytes('192.0.2.1', 3)));
    const { dec, feed } = decoder();
    feed(ipfixMessage(1, 4294967295, 0, t, three));
    feed(ipfixMessage(1, 2, 0, three)); // expected 2: no loss
    expect(dec.counters.sequenceLost).toBe(0);
    feed(ipfixMessage(1, 9, 0, three)); // expected 5: 4 lost
    expect(dec.counters.sequenceLost).toBe(4);
    feed(ipfixMessage(2, 100, 0, ipfixSet(2, templateRecord(256, tuple)))); // other domain: its own count
    expect(dec.counters.sequenceLost).toBe(4);
  });

  it('withdrawal (field count 0), withdraw-all (id 2) and redefinition (RFC 7011 section 8.1)', () => {
    const { dec, recs, problems, feed } = decoder();
    const d = ipfixSet(256, tupleBytes('192.0.2.1', 1));
    feed(ipfixMessage(1, 0, 0, ipfixSet(2, templateRecord(256, tuple)), d));
    feed(ipfixMessage(1, 1, 0, ipfixSet(2, new Wire().u16(256).u16(0).bytes()), d)); // withdrawn, then data waits
    expect(recs).toHaveLength(1);
    expect(dec.counters.templatesWithdrawn).toBe(1);
    feed(ipfixMessage(1, 1, 0, ipfixSet(2, templateRecord(256, [[12, 4], [8, 4], [7, 2], [11, 2], [4, 1]]))));
    // the held set is decoded with the new definition: src and dst swap places
    expect(recs[1]).toMatchObject({ src: '192.0.2.200', dst: '192.0.2.1' });
    feed(ipfixMessage(1, 2, 0, ipfixSet(2, concat(templateRecord(257, tuple), templateRecord(258, tuple)))));
    feed(ipfixMessage(1, 2, 0, ipfixSet(2, new Wire().u16(2).u16(0).bytes())));
    expect(dec.counters.templatesWithdrawn).toBe(4);
    expect(problems).toEqual([]);
  });

  it('options templates (set 3): scope fields skipped, systemInitTimeMilliseconds (160) anchors SysUpTime times', () => {
    const opt = ipfixSet(3, new Wire().u16(400).u16(2).u16(1).u16(149).u16(4).u16(160).u16(8).bytes());
    const odata = ipfixSet(400, new Wire().u32(1).u64(1_699_000_000_000).bytes());
    const t = ipfixSet(2, templateRecord(256, [...tuple, [22, 4], [21, 4]]));
    const d = ipfixSet(256, concat(tupleBytes('192.0.2.1', 1), new Wire().u32(1000).u32(1500).bytes()));
    const { dec, recs, feed } = decoder();
    feed(ipfixMessage(1, 0, 1_700_000_000, opt, odata, t, d));
    expect(dec.counters.optionsRecords).toBe(1);
    // METHODS.md 3.6: start = 160 + 22, end = 160 + 21
    expect(recs[0]).toMatchObject({ start: 1_699_000_001_000, end: 1_699_000_001_500 });
  });

  it('an options record announcing 1-in-N sampling (samplingPacketInterval 305, IANA registry) is counted; counts stay as exported', () => {
    const opt = ipfixSet(3, new Wire().u16(401).u16(2).u16(1).u16(149).u16(4).u16(305).u16(4).bytes());
    const odata = ipfixSet(401, new Wire().u32(1).u32(512).bytes());
    const t = ipfixSet(2, templateRecord(256, [...tuple, [2, 4]]));
    const d = ipfixSet(256, concat(tupleBytes('192.0.2.1', 1), new Wire().u32(3).bytes()));
    const { dec, recs, feed } = decoder();
    feed(ipfixMessage(1, 0, 1_700_000_000, opt, odata, t, d));
    expect(dec.counters.samplingInterval).toBe(512);
    expect(recs[0]!.pkts).toBe(3);
  });
});

describe('hostile IPFIX input: nothing throws, each is counted and reported with an offset', () => {
  const tuple = [[8, 4], [12, 4]] as const;

  it('set length past the message end', () => {
    const m = ipfixMessage(1, 0, 0, ipfixSet(2, templateRecord(256, tuple)));
    m[16 + 3] = 200; // template set claims 200 octets
    const { problems, feed } = decoder();
    expect(feed(m)).toBe(m.length);
    expect(problems.map((p) => [p.reason, p.offset])).toEqual([['set-overrun', 16]]);
  });

  it('a variable-length field overrunning its set', () => {
    const t = ipfixSet(2, templateRecord(256, [[82, 0xffff], ...tuple]));
    const d = ipfixSet(256, new Wire().u8(200).raw(new Uint8Array(10)).bytes());
    const { problems, recs, feed } = decoder();
    feed(ipfixMessage(1, 0, 0, t, d));
    expect(recs).toEqual([]);
    expect(problems.map((p) => p.reason)).toEqual(['field-overrun']);
    expect(problems[0]!.offset).toBe(16 + t.length + 4);
  });

  it('a template with zero fields (withdrawal of an unknown id) and one declaring 65535 fields', () => {
    const { problems, feed } = decoder();
    feed(ipfixMessage(1, 0, 0, ipfixSet(2, new Wire().u16(999).u16(0).bytes())));
    feed(ipfixMessage(1, 0, 0, ipfixSet(2, new Wire().u16(1000).u16(65535).u16(8).u16(4).bytes())));
    expect(problems.map((p) => [p.reason, p.offset])).toEqual([['withdraw-unknown', 20], ['template-overrun', 20]]);
  });

  it('100 000 template ids from one exporter: the cap holds, the excess is counted', () => {
    const { dec, problems, feed } = decoder();
    // ids are 16 bits, so 100 000 distinct ones need two observation domains (50 000 each)
    const per = 4000; // template records per message, 8 octets each
    for (const odid of [1, 2]) {
      for (let first = 256; first < 256 + 50_000; first += per) {
        const w = new Wire();
        for (let id = first; id < Math.min(first + per, 256 + 50_000); id++) w.u16(id).u16(1).u16(8).u16(4);
        feed(ipfixMessage(odid, 0, 0, ipfixSet(2, w.bytes())));
      }
    }
    expect(dec.counters.templates).toBe(LIMITS.templatesPerExporter);
    expect(dec.counters.templatesOverCap).toBe(100_000 - LIMITS.templatesPerExporter);
    expect(dec.counters.problems.counts.get('template-cap')).toBe(100_000 - LIMITS.templatesPerExporter);
    expect(problems.every((p) => p.reason === 'template-cap' && p.offset >= 16)).toBe(true);
  });

  it('a 0-length message loses framing: reported, then reading resumes at the next header', async () => {
    const good = ipfixMessage(1, 0, 0, ipfixSet(2, templateRecord(256, tuple)), ipfixSet(256, new Wire().ip4('192.0.2.1').ip4('192.0.2.2').bytes()));
    const zero = new Wire().u16(10).u16(0).u32(0).u32(0).u32(1).bytes();
    const { recs, problems } = await runIngest(ingestIpfix, concat(zero, good));
    expect(problems.map((p) => [p.reason, p.offset])).toEqual([['bad-header', 0]]);
    expect(recs).toHaveLength(1);
    const direct = decoder();
    expect(direct.feed(zero)).toBe(0);
    expect(direct.problems.map((p) => p.reason)).toEqual(['bad-length']);
  });

  it('data before its template: held (bounded), decoded on arrival; the rest dropped and counted', async () => {
    const d = ipfixSet(256, new Wire().ip4('192.0.2.1').ip4('192.0.2.2').bytes());
    const msgs: Uint8Array[] = [];
    for (let i = 0; i < LIMITS.pendingSets + 1; i++) msgs.push(ipfixMessage(1, i, 0, d));
    msgs.push(ipfixMessage(1, 0, 0, ipfixSet(2, templateRecord(256, tuple))));
    msgs.push(ipfixMessage(1, 0, 0, ipfixSet(257, new Uint8Array(8)))); // never gets a template
    const { recs, problems, summary } = await runIngest(ingestIpfix, concat(...msgs), 100);
    expect(recs).toHaveLength(LIMITS.pendingSets);
    expect(summary.counters.unknownTemplateSets).toBe(2);
    expect(problems.map((p) => p.reason)).toEqual(['unknown-template', 'unknown-template']);
  });

  it('a file cut inside a message is reported as truncated', async () => {
    const good = ipfixMessage(1, 0, 0, ipfixSet(2, templateRecord(256, tuple)));
    const { problems, summary } = await runIngest(ingestIpfix, concat(good, good.subarray(0, 10)));
    expect(summary.truncated).toBe(true);
    expect(problems.map((p) => [p.reason, p.offset])).toEqual([['truncated', good.length]]);
  });

  describe('counters, times and events real exporters send instead of the delta counters', () => {
    // Element ids and meanings: IANA "IPFIX Information Elements" registry (RFC 7012): 85/86
    // octet/packetTotalCount, 231/232 initiator/responderOctets, 298/299 initiator/responderPackets,
    // 243 dot1qVlanId, 233 firewallEvent (value 3 = flow denied), 322-325 observationTime*.
    const one = (fields: readonly (readonly number[])[], values: Uint8Array, proto = 17) => {
      const t = ipfixSet(2, templateRecord(400, [[8, 4], [12, 4], [7, 2], [11, 2], [4, 1], ...fields]));
      const d = ipfixSet(400, concat(new Wire().ip4('192.0.2.1').ip4('198.51.100.9').u16(50000).u16(53).u8(proto).bytes(), values));
      const { recs, problems, feed } = decoder();
      feed(ipfixMessage(1, 0, 1_700_000_000, t, d));
      expect(problems).toEqual([]);
      expect(recs).toHaveLength(1);
      return recs[0]!;
    };

    it('running totals (85/86, and RFC 5103 reverse totals) stand in for absent delta counters', () => {
      const r = one([[85, 8], [86, 4], [85, 4, 29305], [86, 4, 29305]], new Wire().u64(4200).u32(7).u32(900).u32(3).bytes());
      // reverse elements make it a biflow: UDP with packets back is established (docs/flow-inputs.md)
      expect(r).toMatchObject({ bytes: 4200, pkts: 7, rbytes: 900, rpkts: 3, outcome: 'established' });
    });

    it('a delta counter wins over a total in the same template, whatever the field order', () => {
      const r = one([[85, 4], [1, 4], [86, 4], [2, 4]], new Wire().u32(99_999).u32(1500).u32(777).u32(5).bytes());
      expect(r).toMatchObject({ bytes: 1500, pkts: 5 });
    });

    it('initiator/responder counters (231, 232, 298, 299) fill both directions', () => {
      const r = one([[231, 8], [232, 8], [298, 4], [299, 4]], new Wire().u64(640).u64(12_000).u32(8).u32(10).bytes());
      expect(r).toMatchObject({ bytes: 640, rbytes: 12_000, pkts: 8, rpkts: 10, outcome: 'established' });
    });

    it('observation time (323) dates a record without flow times; flow times win when present', () => {
      const obs = one([[323, 8], [1, 4]], new Wire().u64(1_700_000_123_456).u32(60).bytes());
      expect(obs).toMatchObject({ start: 1_700_000_123_456, end: 1_700_000_123_456 });
      const both = one([[323, 8], [152, 8]], new Wire().u64(1_700_000_123_456).u64(1_700_000_100_000).bytes());
      expect(both).toMatchObject({ start: 1_700_000_100_000, end: 1_700_000_100_000 });
      const secs = one([[322, 4]], new Wire().u32(1_700_000_200).bytes());
      expect(secs.start).toBe(1_700_000_200_000);
    });

    it('times relative to the export time (158/159, microseconds before it) and durations (161/162) fill the missing side', () => {
      // the message's export time is 1700000000 s (see `one`)
      const rel = one([[158, 4], [159, 4]], new Wire().u32(2_500_000).u32(500_000).bytes());
      expect([rel.start, rel.end]).toEqual([1_699_999_997_500, 1_699_999_999_500]);
      const dur = one([[152, 8], [161, 4]], new Wire().u64(1_700_000_100_000).u32(1234).bytes());
      expect([dur.start, dur.end]).toEqual([1_700_000_100_000, 1_700_000_101_234]);
      const back = one([[153, 8], [162, 4]], new Wire().u64(1_700_000_100_000).u32(2_000_000).bytes());
      expect([back.start, back.end]).toEqual([1_700_000_098_000, 1_700_000_100_000]);
    });

    it('a firewall "flow denied" event (233 = 3) is a rejected flow', () => {
      const denied = one([[233, 1], [6, 1]], new Wire().u8(3).u8(0x02).bytes(), 6);
      expect(denied.outcome).toBe('rejected');
      const deleted = one([[233, 1], [6, 1]], new Wire().u8(2).u8(0x02).bytes(), 6);
      expect(deleted.outcome).toBe('unanswered');
      // a "created" event precedes any answer: neither success nor failure
      const created = one([[233, 1], [231, 4], [232, 4]], new Wire().u8(1).u32(0).u32(0).bytes(), 6);
      expect(created.outcome).toBe('partial');
    });

    it('octets back without a packet count (firewall exports give 231/232 only) make a flow answered', () => {
      const r = one([[231, 4], [232, 4]], new Wire().u32(300).u32(4000).bytes());
      expect(r).toMatchObject({ rpkts: 0, rbytes: 4000, outcome: 'established' });
      const none = one([[231, 4], [232, 4]], new Wire().u32(300).u32(0).bytes());
      expect(none.outcome).toBe('unanswered');
    });

    it('dot1qVlanId (243) gives the VLAN when vlanId (58) is absent; 58 wins when both come', () => {
      expect(one([[243, 2]], new Wire().u16(60).bytes()).vlan).toBe(60);
      expect(one([[243, 2], [58, 2]], new Wire().u16(60).u16(61).bytes()).vlan).toBe(61);
    });
  });
});
