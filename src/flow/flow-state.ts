import type { Outcome } from './record.js';

/**
 * Per-flow state bits, kept in one typed array. The outcome is derived from them when an update is cut
 * (record.ts conventions; METHODS.md 2.4).
 */
export const enum St {
  /** The first packet has been counted (OpenedWithSyn is decided). */
  FirstSeen = 1,
  /** TCP: the first packet was a SYN without ACK from the initiator. */
  OpenedWithSyn = 2,
  /** TCP: a SYN-ACK came back from the responder. */
  SynAckBack = 4,
  /** TCP: the initiator sent an ACK after the SYN-ACK (seen, or implied by the ACK): the handshake completed. */
  Completed = 8,
  /** TCP: the responder sent RST before any SYN-ACK. */
  ResetBack = 16,
  /** An ICMP destination unreachable quoted this flow. */
  IcmpRejected = 32,
  FinForward = 64,
  FinReverse = 128,
  /** TCP ended (RST, or FIN both ways): the flow is removed after a short linger. */
  Closing = 256,
  /** The responder has sent at least one packet. */
  ReverseSeen = 512,
  /** An ICMP time exceeded quoted this flow: a probe whose hop limit ran out on the way (traceroute). */
  TtlExpired = 1024,
}

const FIN = 0x01, SYN = 0x02, RST = 0x04, ACK = 0x10;

/** TCP handshake and teardown tracking for one packet; returns the new state. `dir` 0 = from the initiator. */
export function tcpStep(state: number, dir: number, flags: number): number {
  if ((state & St.FirstSeen) === 0) {
    state |= St.FirstSeen;
    if (dir === 0 && (flags & (SYN | ACK)) === SYN) state |= St.OpenedWithSyn;
  }
  if (dir === 1 && (flags & (SYN | ACK)) === (SYN | ACK)) state |= St.SynAckBack;
  else if (dir === 1 && (flags & RST) !== 0 && (state & St.SynAckBack) === 0) state |= St.ResetBack;
  else if (dir === 0 && (state & St.SynAckBack) !== 0 && (flags & ACK) !== 0) state |= St.Completed;
  // an initiator acknowledges only what it received (RFC 9293 section 3.5): a plain ACK after its SYN
  // means a SYN-ACK came back, even when the capture missed it (a tap that sees one direction, a drop)
  else if (dir === 0 && (state & St.OpenedWithSyn) !== 0 && (flags & (SYN | ACK | RST)) === ACK) state |= St.Completed;
  if ((flags & FIN) !== 0) state |= dir === 0 ? St.FinForward : St.FinReverse;
  return state;
}

/** The TCP flow has ended and should linger then go (RST either way, or FIN both ways). */
export function tcpEnded(state: number, flags: number): boolean {
  return (flags & RST) !== 0 || (state & (St.FinForward | St.FinReverse)) === (St.FinForward | St.FinReverse);
}

/**
 * `dport` is the flow's destination port, for ICMP its type * 256 + code: an echo request's flow holds
 * its replies (record.ts), so it was answered or not; other ICMP flows have no outcome.
 */
export function outcomeOf(proto: number, state: number, dport: number): Outcome {
  if (proto === 1 || proto === 58) {
    if (dport >> 8 !== (proto === 1 ? 8 : 128)) return 'n/a';
    return udpLike(state);
  }
  if (proto === 6) {
    // an established connection stays established in later updates, whatever comes after
    if ((state & (St.OpenedWithSyn | St.Completed)) === (St.OpenedWithSyn | St.Completed)) return 'established';
    if ((state & St.IcmpRejected) !== 0) return 'rejected';
    if ((state & St.OpenedWithSyn) === 0) return 'partial';
    if ((state & St.ResetBack) !== 0) return 'rejected';
    if ((state & (St.SynAckBack | St.ReverseSeen | St.TtlExpired)) !== 0) return 'partial';
    return 'unanswered';
  }
  return udpLike(state);
}

/** UDP, other protocols and ICMP echo: answered, refused, expired on the way, or unanswered. */
function udpLike(state: number): Outcome {
  if ((state & St.ReverseSeen) !== 0) return 'established';
  if ((state & St.IcmpRejected) !== 0) return 'rejected';
  // it never reached its target: neither an answer nor a failure there
  if ((state & St.TtlExpired) !== 0) return 'partial';
  return 'unanswered';
}
