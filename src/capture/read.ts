import type { ByteSource } from '../ingest/source.js';
import type { InputProblem } from '../util/problem.js';
import { CaptureParser } from './parser.js';
import type { CaptureSummary, PacketSink } from './types.js';

/**
 * Reads a whole ByteSource through a CaptureParser. Never throws on bad data: a failing read (a corrupt
 * gzip stream, an I/O error) becomes a fatal `read-error` problem. The caller closes the source.
 */
export async function readCapture(src: ByteSource, onPacket: PacketSink, onProblem?: (p: InputProblem) => void): Promise<CaptureSummary> {
  const parser = new CaptureParser(src.name, onPacket, onProblem);
  for (;;) {
    let chunk: Uint8Array | null;
    try {
      chunk = await src.read();
    } catch (e) {
      parser.fail('read-error', `read failed: ${e instanceof Error ? e.message : String(e)}`);
      break;
    }
    if (chunk === null || !parser.push(chunk)) break;
  }
  return parser.end();
}
