import type { IngestSummary } from './types.js';

/**
 * Most of a capture's packets were UDP datagrams to a flow-export port that start like an IPFIX or
 * NetFlow v9 message (`exportLikeDatagrams`, counted by the capture path): the capture is of export
 * traffic, and `--input-format export-capture` reads the flows it carries.
 */
export function looksLikeExportCapture(s: IngestSummary): boolean {
  const n = s.counters['exportLikeDatagrams'] ?? 0;
  return n > 0 && n * 2 >= s.packets;
}
