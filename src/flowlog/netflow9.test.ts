import { describe, expect, it } from 'vitest';
import { ingestNetflowV5, ingestNetflowV9 } from './file-ingest.js';
import { NetflowV5Decoder } from './netflow5.js';
import { NetflowV9Decoder } from './netflow9.js';
import { concat, runIngest, Wire } from './testing.js';

/** v9 export packet (RFC 3954 section 5.1): version 9, count, sysUpTime, unix_secs, sequence, Source ID. */
function packet(seq: number, uptime: number, secs: number, ...flowsets: Uint8Array[]): Uint8Array {
  const w = new Wire().u16(9).u16(flowsets.length).u32(uptime).u32(secs).u32(seq).u32(5);
  for (const f of flowsets) w.raw(f);
  return w.bytes();
}
const flowset = (id: number, body: Uint8Array) => new Wire().u16(id).u16(4 + body.length).raw(body).bytes();
// IPV4_SRC_ADDR(8)/4, IPV4_DST_ADDR(12)/4, PROTOCOL(4)/1, FIRST_SWITCHED(22)/4, LAST_SWITCHED(21)/4
const template = flowset(0, new Wire().u16(256).u16(5).u16(8).u16(4).u16(12).u16(4).u16(4).u16(1).u16(22).u16(4).u16(21).u16(4).bytes());
const record = (first: number, last: number) => new Wire().ip4('192.0.2.1').ip4('198.51.100.1').u8(17).u32(first).u32(last).bytes();

describe('NetFlow v9 (RFC 3954)', () => {
  it('times from FIRST/LAST_SWITCHED relative to sysUpTime (METHODS check value 20)', async () => {
    const data = flowset(256, concat(record(40_000, 90_000), new Uint8Array(3)));
    const { recs, problems } = await runIngest(ingestNetflowV9, packet(0, 100_000, 1_700_000_000, template, data), 9, 'r.nf9');
    expect(problems).toEqual([]);
    expect(recs[0]).toMatchObject({ start: 1_699_999_940_000, end: 1_699_999_990_000, exporter: 'r.nf9/5', outcome: 'n/a' });
  });

  it('options templates give scope and option lengths in octets (RFC 3954 section 6.1); their records are not flows', () => {
    // scope System(1)/4; option SAMPLING_INTERVAL(34)/4; then 2 octets of padding
    const opt = flowset(1, new Wire().u16(300).u16(4).u16(4).u16(1).u16(4).u16(34).u16(4).u16(0).bytes());
    const odata = flowset(300, new Wire().u32(1).u32(100).bytes());
    const got: unknown[] = [];
    const dec = new NetflowV9Decoder('t', 't', (r) => got.push(r));
    const p = packet(0, 1, 1, opt, odata);
    dec.decodePacket(p, 0, p.length, 0);
    expect(got).toEqual([]);
    expect(dec.counters.optionsRecords).toBe(1);
    expect(dec.counters.problems.total).toBe(0);
  });

  it('hostile: reserved FlowSet id and a length-65535 field in a datagram', () => {
    const dec = new NetflowV9Decoder('t', 't', () => {});
    const reasons: string[] = [];
    const d = new NetflowV9Decoder('t', 't', () => {}, undefined, (p) => reasons.push(p.reason));
    const p = packet(0, 1, 1, flowset(7, new Uint8Array(4)), flowset(0, new Wire().u16(257).u16(1).u16(8).u16(0xffff).bytes()));
    d.decodePacket(p, 0, p.length, 0);
    dec.decodePacket(p, 0, 3, 0);
    expect(reasons).toEqual(['bad-set-id', 'bad-template']);
    expect(dec.counters.problems.toObject()).toEqual({ truncated: 1 });
  });

  it('hostile file: junk between packets is skipped to the next header; a FlowSet past the end is reported', async () => {
    const good = packet(1, 100_000, 1_700_000_000, template, flowset(256, record(1, 2)));
    const junk = new Uint8Array([0, 5, 0, 0, 0xaa]); // reads as reserved FlowSet id 5: not a boundary
    const over = packet(2, 1, 1, new Wire().u16(256).u16(500).bytes());
    const { recs, problems } = await runIngest(ingestNetflowV9, concat(good, junk, good, over), 11);
    expect(recs).toHaveLength(2);
    expect(problems.map((p) => [p.reason, p.offset])).toEqual([['bad-header', good.length], ['set-overrun', 2 * good.length + junk.length + 20]]);
  });

  it('firewall-style templates: initiator/responder bytes (231/232), event time (323), denied event (233)', () => {
    // v9 field types above 127 follow the IANA IPFIX numbering (RFC 3954 section 8 leaves them to the
    // vendor; the firewall exporters seen use the IANA ids: from memory)
    const t = flowset(0, new Wire().u16(260).u16(8)
      .u16(8).u16(4).u16(12).u16(4).u16(4).u16(1).u16(7).u16(2).u16(11).u16(2)
      .u16(231).u16(4).u16(232).u16(4).u16(323).u16(8).bytes());
    const rec = new Wire().ip4('192.0.2.7').ip4('198.51.100.3').u8(6).u16(51000).u16(22).u32(300).u32(5000).u64(1_700_000_555_000).bytes();
    const got: { bytes: number; rbytes: number; start: number }[] = [];
    const dec = new NetflowV9Decoder('t', 't', (r) => got.push(r));
    const p = packet(0, 1, 1_700_000_600, t, flowset(260, rec));
    dec.decodePacket(p, 0, p.length, 0);
    expect(got).toEqual([expect.objectContaining({ bytes: 300, rbytes: 5000, start: 1_700_000_555_000 })]);
  });
});

describe('NetFlow v5 (fixed 48-octet records; scapy NetflowHeaderV5 / NetflowRecordV5 layout)', () => {
  const v5header = (count: number, seq = 0) => new Wire().u16(5).u16(count).u32(100_000).u32(1_700_000_000).u32(0).u32(seq).u8(0).u8(1).u16(0).bytes();
  const v5record = () => new Wire().ip4('192.0.2.1').ip4('198.51.100.1').ip4('0.0.0.0').u16(1).u16(2).u32(3).u32(180)
    .u32(90_000).u32(95_000).u16(40000).u16(80).u8(0).u8(0x02).u8(6).u8(0).u16(0).u16(0).u8(0).u8(0).u16(0).bytes();

  it('hostile: count 0, count over 30 and a packet shorter than its count are reported, never read past', async () => {
    const reasons: string[] = [];
    const dec = new NetflowV5Decoder('t', 't', () => {}, undefined, (p) => reasons.push(p.reason));
    expect(dec.decodePacket(v5header(0), 0, 24, 0)).toBe(0);
    expect(dec.decodePacket(v5header(31), 0, 24, 0)).toBe(0);
    const short = concat(v5header(2), v5record());
    expect(dec.decodePacket(short, 0, short.length, 0)).toBe(0);
    expect(reasons).toEqual(['bad-length', 'bad-length', 'truncated']);
  });

  it('the header sampling_interval (mode bits 01, interval 100) is counted, counts stay as exported', () => {
    const h = v5header(1);
    h[22] = 0x40; h[23] = 100;
    const dec = new NetflowV5Decoder('t', 't', () => {});
    const p = concat(h, v5record());
    expect(dec.decodePacket(p, 0, p.length, 0)).toBe(72);
    expect(dec.counters.samplingInterval).toBe(100);
  });

  it('a file with junk between packets resynchronises at the next header; a cut packet is truncated', async () => {
    const good = concat(v5header(1), v5record());
    const { recs, problems } = await runIngest(ingestNetflowV5, concat(good, new Uint8Array([0, 5, 0, 0, 9]), good, good.subarray(0, 30)), 13, 'r.nf5');
    expect(recs).toHaveLength(2);
    // SYN only from a one-way exporter: unanswered (docs/flow-inputs.md outcome rules); engine 0.1 -> /1
    expect(recs[0]).toMatchObject({ start: 1_699_999_990_000, end: 1_699_999_995_000, outcome: 'unanswered', exporter: 'r.nf5/1' });
    expect(problems.map((p) => [p.reason, p.offset])).toEqual([['bad-header', 72], ['truncated', 2 * 72 + 5]]);
  });
});
