import type { IngestSummary } from './types.js';

/**
 * Most of a capture's packets were flow-export datagrams (`exportLikeDatagrams`, counted by the
 * capture path by export-sniff.ts's rule): the capture is of export traffic, and `--input-format
 * export-capture` reads the flows it carries.
 */
export function looksLikeExportCapture(s: IngestSummary): boolean {
  const n = s.counters['exportLikeDatagrams'] ?? 0;
  return n > 0 && n * 2 >= s.packets;
}

/**
 * Completed TCP connections without any packet back (the initiator's ACK implied the answer): in a
 * capture of both directions only drops make them, so 20 or more and a tenth of all completed ones
 * mean a tap or SPAN port that sees one direction of some traffic (ours).
 */
export function looksOneWay(s: IngestSummary): boolean {
  const done = s.counters['tcpCompleted'] ?? 0, unseen = s.counters['tcpCompletedUnseen'] ?? 0;
  return unseen >= 20 && unseen * 10 >= done;
}

/**
 * Names of link types a capture may carry that the decoder does not read (the link-type registry of
 * draft-ietf-opsawg-pcaplinktype; names from memory of it).
 */
const UNDECODED_NAMES: Record<number, string> = {
  6: 'IEEE802_5 (token ring)', 10: 'FDDI', 105: 'IEEE802_11 (Wi-Fi)', 119: 'PRISM_HEADER (Wi-Fi)',
  127: 'IEEE802_11_RADIOTAP (Wi-Fi)', 163: 'IEEE802_11_AVS (Wi-Fi)', 192: 'PPI (Wi-Fi)', 195: 'IEEE802_15_4',
  201: 'BLUETOOTH_HCI_H4_WITH_PHDR', 220: 'USB_LINUX_MMAPPED', 249: 'USBPCAP', 253: 'NETLINK',
};

/** The link types the decoder reads, for the note on the others. */
const DECODED = 'Ethernet, raw IP, Linux cooked v1 and v2, BSD loopback, PPP and Cisco HDLC';

/** What the reader of a summary should know beyond its counts: one line each, without the file name. */
export function inputNotes(s: IngestSummary): string[] {
  const notes: string[] = [];
  if (s.counters['readAsExports']) notes.push('note: most packets are flow-export datagrams, so the flows they carry were read; --input-format pcap reads the packets themselves');
  if (looksLikeExportCapture(s)) notes.push('hint: most packets are IPFIX or NetFlow export datagrams; --input-format export-capture reads the flows they carry');
  if (looksOneWay(s)) {
    notes.push(`note: ${s.counters['tcpCompletedUnseen']} of ${s.counters['tcpCompleted']} completed TCP connections had no packet back: `
      + 'the capture may hold one direction only (asymmetric routing, a one-way tap); answers are inferred from the initiators\' ACKs, '
      + 'and unanswered attempts (scans, floods) are less sure');
  }
  const lt = s.counters['undecodedLinkType'];
  if (lt !== undefined) {
    const skipped = s.problemCounts['undecoded-linktype'] ?? 0;
    notes.push(`note: ${skipped} packet${skipped === 1 ? ' is' : 's are'} of link type ${lt}${UNDECODED_NAMES[lt] ? ` ${UNDECODED_NAMES[lt]}` : ''}, `
      + `which tidewatch does not decode (it reads ${DECODED}); they were skipped`);
  }
  const n = s.counters['samplingInterval'] ?? 0;
  if (n > 1) notes.push(`note: the exporter samples 1 in ${n} packets; packets and bytes are as exported, not scaled`);
  return notes;
}
