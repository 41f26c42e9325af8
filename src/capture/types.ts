import type { InputProblem } from '../util/problem.js';

/**
 * Called once per packet record. `buf` is the reader's reused chunk (or carry buffer): the bytes are
 * valid only during the call, never keep a reference. No object is created per packet.
 *
 * @param off      offset of the packet's first byte in `buf`
 * @param capLen   captured length (bytes present)
 * @param origLen  original length on the wire
 * @param tsSec    integer seconds since 1970-01-01T00:00:00Z
 * @param tsNs     nanoseconds within that second, 0..999_999_999 (integer)
 * @param linkType link-layer type of this packet's interface (pcap LINKTYPE_* value)
 * @param fileOff  byte offset of the record header in the input (for error reports)
 * @param dataOff  byte offset of the packet's first octet in the input (after a record header of 16
 *                 octets in pcap, 28 in a pcapng enhanced or obsolete packet block, 12 in a simple one)
 */
export type PacketSink = (
  buf: Uint8Array,
  off: number,
  capLen: number,
  origLen: number,
  tsSec: number,
  tsNs: number,
  linkType: number,
  fileOff: number,
  dataOff: number,
) => void;

export type CaptureFormat = 'pcap' | 'pcapng';

export interface CaptureSummary {
  file: string;
  format: CaptureFormat | 'unknown';
  packets: number;
  /** Sum of captured lengths. */
  capturedBytes: number;
  /** Bytes of input consumed (after a fatal problem: up to the unit that stopped reading). */
  inputBytes: number;
  /** Problems met, in order (bounded: the first 100 are kept, all are counted in `problemCounts`). */
  problems: InputProblem[];
  problemCounts: Record<string, number>;
  /** true when the input ended inside a record; everything before it was delivered. */
  truncated: boolean;
  /** true when a fatal problem stopped reading before the end. */
  stopped: boolean;
  /** pcapng SPB packets carry no time; they get the last seen timestamp and the input is flagged. */
  untimed: boolean;
  /** pcapng ISB ifdrop/osdrop totals when present (capture lost packets). */
  droppedByCapture: number;
}
