import type { Outcome } from '../flow/record.js';

/** TCP flag bits (RFC 9293 section 3.1). */
const SYN = 0x02, RST = 0x04, ACK = 0x10;

/**
 * Outcome of an exported flow (docs/flow-inputs.md, "Outcome rules"); same meanings as the capture
 * path (src/flow/record.ts). Arguments: OR of TCP flags each way, what came back (reverse packets plus
 * reverse octets: some exporters give only one of the two), whether the record
 * carries reverse counters (RFC 5103 biflow, or reverse columns) and which flag fields it carries;
 * positional, so the per-record call allocates nothing. Rules (ours, no source: an exporter only gives
 * ORed flags and counts):
 * - ICMP/ICMPv6: `n/a`.
 * - TCP, flags known: no SYN from the initiator -> `partial` (mid-stream); RST from the responder ->
 *   `rejected`; SYN+ACK from the responder and ACK from the initiator -> `established`; nothing back
 *   -> `unanswered`; anything else (SYN-ACK seen, no completing ACK) -> `partial`.
 *   Without responder flags (one-way exporter, or biflow without reverseTcpControlBits) an initiator
 *   that sent SYN and ACK completed the handshake -> `established`, SYN alone -> `unanswered`
 *   (for biflow: `partial` when packets came back).
 * - TCP without any flags: biflow -> `established` when packets came back, else `unanswered`;
 *   one-way -> `n/a` (nothing to tell).
 * - UDP and others: biflow -> `established` when reverse packets > 0 else `unanswered`; one-way
 *   exporters cannot tell an answered flow from an unanswered one -> `n/a`.
 */
export function exportedOutcome(
  proto: number, flags: number, rflags: number, back: number,
  biflow: boolean, hasFlags: boolean, hasRevFlags: boolean,
): Outcome {
  if (proto === 1 || proto === 58) return 'n/a';
  if (proto !== 6) return biflow ? (back > 0 ? 'established' : 'unanswered') : 'n/a';
  if (!hasFlags) return biflow ? (back > 0 ? 'established' : 'unanswered') : 'n/a';
  if ((flags & SYN) === 0) return 'partial';
  if (biflow && hasRevFlags) {
    if (rflags & RST) return 'rejected';
    if ((rflags & (SYN | ACK)) === (SYN | ACK)) return flags & ACK ? 'established' : 'partial';
    return back === 0 && rflags === 0 ? 'unanswered' : 'partial';
  }
  if (biflow && back === 0) return 'unanswered';
  if (flags & ACK) return 'established';
  return biflow ? 'partial' : 'unanswered';
}
