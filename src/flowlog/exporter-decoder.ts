import type { FlowSink } from '../flow/record.js';
import type { InputProblem } from '../util/problem.js';
import { IpfixDecoder } from './ipfix.js';
import { NetflowV5Decoder } from './netflow5.js';
import { NetflowV9Decoder } from './netflow9.js';
import type { ExportSession, TemplateBudget } from './session.js';

export type ExportFormat = 'ipfix' | 'netflow9' | 'netflow5';

/**
 * One exporter's decoder, fed a datagram at a time: the UDP collector and the export-capture reader
 * share it. A datagram carries one IPFIX message (RFC 7011 section 10.3.3) or one NetFlow v9 or v5
 * packet; octets after an IPFIX message or a v5 packet are reported, not read.
 */
export class ExporterDecoder {
  readonly session: ExportSession;
  /** The IPFIX decoder itself, for a TCP stream framed by message lengths; null for NetFlow. */
  readonly ipfix: IpfixDecoder | null = null;
  private readonly v9: NetflowV9Decoder | null = null;
  private readonly v5: NetflowV5Decoder | null = null;

  /** @param file input name for problems; @param label exporter label before `/ODID` */
  constructor(readonly format: ExportFormat, file: string, label: string, sink: FlowSink, budget: TemplateBudget, onProblem?: (p: InputProblem) => void) {
    if (format === 'ipfix') this.session = (this.ipfix = new IpfixDecoder(file, label, sink, budget, onProblem)).session;
    else if (format === 'netflow5') this.session = (this.v5 = new NetflowV5Decoder(file, label, sink, budget, onProblem)).session;
    else this.session = (this.v9 = new NetflowV9Decoder(file, label, sink, budget, onProblem)).session;
  }

  /** The datagram's octets b[off, off + len); `inputOff` is `off`'s position in the input. */
  datagram(b: Uint8Array, off: number, len: number, inputOff: number): void {
    if (this.v9) { this.v9.decodePacket(b, off, off + len, inputOff); return; }
    const used = this.ipfix ? this.ipfix.decodeMessage(b, off, len, inputOff) : this.v5!.decodePacket(b, off, len, inputOff);
    if (used > 0 && used < len) {
      const what = this.ipfix ? 'IPFIX message' : 'NetFlow v5 packet';
      this.session.problem('trailing-bytes', inputOff + used, `${len - used} bytes after the ${what} in a datagram`);
    }
  }

  finish(): void { this.session.finish(); }
}
