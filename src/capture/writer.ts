import { closeSync, openSync, writeSync } from 'node:fs';

/**
 * Classic pcap writer (draft-ietf-opsawg-pcap; METHODS.md 1.1): little-endian header, microsecond
 * (magic A1B2C3D4 written as D4 C3 B2 A1) or nanosecond (A1B23C4D) timestamps, one link type, a
 * snaplen that truncates the captured bytes while the record keeps the original length. Records go
 * into one large reused chunk that is flushed with a synchronous write when full: no allocation and no
 * system call per packet.
 */
export interface PcapWriterOptions {
  /** LINKTYPE_ETHERNET (1, default) or LINKTYPE_RAW (101). */
  linkType?: number;
  /** Maximum octets kept per packet; default 65535. */
  snaplen?: number;
  /** Nanosecond timestamps (default microsecond). */
  nanosecond?: boolean;
  /** Size of the write buffer; default 4 MiB. */
  chunkBytes?: number;
}

const FILE_HEADER = 24;
const RECORD_HEADER = 16;

export class PcapWriter {
  readonly snaplen: number;
  readonly nanosecond: boolean;
  private readonly fd: number;
  private readonly chunk: Uint8Array;
  private readonly view: DataView;
  private used = 0;
  private closed = false;
  /** Packets written so far. */
  packets = 0;
  /** Bytes of file produced so far (header included, buffered bytes included). */
  fileBytes = 0;

  constructor(readonly path: string, opts: PcapWriterOptions = {}) {
    this.snaplen = opts.snaplen ?? 65535;
    if (!(this.snaplen >= 1 && this.snaplen <= 0x3ffff)) throw new Error(`pcap snaplen out of range: ${this.snaplen}`);
    this.nanosecond = opts.nanosecond ?? false;
    const size = Math.max(opts.chunkBytes ?? 4 * 1024 * 1024, FILE_HEADER + RECORD_HEADER + this.snaplen);
    this.chunk = new Uint8Array(size);
    this.view = new DataView(this.chunk.buffer);
    this.fd = openSync(path, 'w');
    const v = this.view;
    v.setUint32(0, this.nanosecond ? 0xa1b23c4d : 0xa1b2c3d4, true);
    v.setUint16(4, 2, true);
    v.setUint16(6, 4, true);
    v.setUint32(8, 0, true);
    v.setUint32(12, 0, true);
    v.setUint32(16, this.snaplen, true);
    v.setUint32(20, (opts.linkType ?? 1) & 0xffff, true);
    this.used = FILE_HEADER;
    this.fileBytes = FILE_HEADER;
  }

  /**
   * Appends one packet: `len` bytes at `buf[off]` are what the frame has (at most snaplen are kept);
   * `origLen` its length on the wire (raised to `len` when smaller). `tsNs` is nanoseconds within
   * `tsSec`, as PacketSink delivers them; microsecond files keep floor(tsNs / 1000).
   */
  write(buf: Uint8Array, off: number, len: number, origLen: number, tsSec: number, tsNs: number): void {
    const cap = len < this.snaplen ? len : this.snaplen;
    if (this.used + RECORD_HEADER + cap > this.chunk.length) this.flush();
    const v = this.view;
    const o = this.used;
    v.setUint32(o, tsSec, true);
    v.setUint32(o + 4, this.nanosecond ? tsNs : Math.floor(tsNs / 1000), true);
    v.setUint32(o + 8, cap, true);
    v.setUint32(o + 12, origLen > len ? origLen : len, true);
    const dst = this.chunk;
    for (let i = 0, d = o + RECORD_HEADER; i < cap; i++, d++) dst[d] = buf[off + i]!; // no view per packet
    this.used = o + RECORD_HEADER + cap;
    this.fileBytes += RECORD_HEADER + cap;
    this.packets++;
  }

  /** Writes the buffered records to the file. */
  flush(): void {
    let done = 0;
    while (done < this.used) done += writeSync(this.fd, this.chunk, done, this.used - done);
    this.used = 0;
  }

  close(): void {
    if (this.closed) return;
    this.flush();
    closeSync(this.fd);
    this.closed = true;
  }
}
