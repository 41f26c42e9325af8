export { CaptureParser } from './parser.js';
export { readCapture } from './read.js';
export type { CaptureFormat, CaptureSummary, PacketSink } from './types.js';
