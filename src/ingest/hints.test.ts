import { describe, expect, it } from 'vitest';
import { inputNotes } from './hints.js';
import type { IngestSummary } from './types.js';

const summary = (packets: number, counters: Record<string, number>): IngestSummary => ({
  file: 'x', format: 'pcap', packets, records: packets, bytes: 0, flows: 0, firstMs: NaN, lastMs: NaN,
  problemCounts: {}, truncated: false, counters,
});

describe('notes under an input summary (ours)', () => {
  it('a capture mostly of export datagrams names the export-capture format; a few such datagrams do not', () => {
    expect(inputNotes(summary(10, { exportLikeDatagrams: 6 }))[0]).toMatch(/--input-format export-capture/);
    expect(inputNotes(summary(10, { exportLikeDatagrams: 4 }))).toEqual([]);
  });
  it('a capture whose completed TCP connections often had no packet back is said to be one-way', () => {
    expect(inputNotes(summary(10, { tcpCompleted: 400, tcpCompletedUnseen: 300 }))[0]).toMatch(/^note: 300 of 400 completed TCP connections had no packet back: the capture may hold one direction only/);
    expect(inputNotes(summary(10, { tcpCompleted: 400, tcpCompletedUnseen: 30 }))).toEqual([]);
    expect(inputNotes(summary(10, { tcpCompleted: 12, tcpCompletedUnseen: 12 }))).toEqual([]);
  });
  it('announced sampling is said, with the counts left as exported', () => {
    expect(inputNotes(summary(10, { samplingInterval: 1000 }))).toEqual(['note: the exporter samples 1 in 1000 packets; packets and bytes are as exported, not scaled']);
    expect(inputNotes(summary(10, { samplingInterval: 1 }))).toEqual([]);
  });
  it('packets of a link type the decoder does not read are named, with the link type (draft-ietf-opsawg-pcaplinktype registry)', () => {
    const s = { ...summary(5, { undecodedLinkType: 127 }), problemCounts: { 'undecoded-linktype': 5 } };
    expect(inputNotes(s)).toEqual(['note: 5 packets are of link type 127 IEEE802_11_RADIOTAP (Wi-Fi), which tidewatch does not decode '
      + '(it reads Ethernet, raw IP, Linux cooked v1 and v2, BSD loopback, PPP and Cisco HDLC); they were skipped']);
    expect(inputNotes({ ...summary(1, { undecodedLinkType: 4242 }), problemCounts: { 'undecoded-linktype': 1 } })[0]).toMatch(/^note: 1 packet is of link type 4242, which/);
  });
});
