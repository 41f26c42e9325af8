import { u16, u32 } from './bytes.js';
import { R } from './stats.js';

/** Extension headers walked per packet at most (METHODS.md 2.3: cap crafted chains). */
export const MAX_EXT_HEADERS = 10;

/**
 * Result of walking an IPv6 extension-header chain. One reused instance per caller; `walk` returns -1
 * on success or a reason index (stats.ts R) when the chain is malformed or cut short.
 */
export class Ipv6Chain {
  /** Next Header value that ends the chain (the flow's protocol). */
  proto = 0;
  /** Offset of the upper-layer header. */
  l4 = 0;
  /** A Fragment header was met. */
  fragmented = false;
  fragOffset = 0;
  fragMore = false;
  fragId = 0;

  /**
   * Walks from the header after the fixed 40 octets (`p`, first Next Header `nh`) up to `limit`
   * (exclusive). Length rules from RFC 8200 section 4 and RFC 4302 section 2.2 (AH counts 32-bit words).
   */
  walk(b: Uint8Array, p: number, nh: number, limit: number): number {
    this.fragmented = false;
    this.fragOffset = 0;
    this.fragMore = false;
    this.fragId = 0;
    for (let n = 0; ; n++) {
      let len: number;
      // Hop-by-Hop is only valid right after the fixed header (RFC 8200 section 4.1)
      if (nh === 0 && n !== 0) return R['ipv6-hop-by-hop-misplaced'];
      switch (nh) {
        case 0: case 43: case 60: case 135: case 139: case 140:
          if (p + 2 > limit) return R['truncated-ipv6-ext'];
          len = (b[p + 1]! + 1) * 8;
          break;
        case 44: {
          if (p + 8 > limit) return R['truncated-ipv6-ext'];
          const w = u16(b, p + 2);
          this.fragmented = true;
          this.fragOffset = w >>> 3;
          this.fragMore = (w & 1) !== 0;
          this.fragId = u32(b, p + 4);
          if (this.fragOffset !== 0) { this.proto = b[p]!; this.l4 = p + 8; return -1; }
          len = 8;
          break;
        }
        case 51:
          if (p + 2 > limit) return R['truncated-ipv6-ext'];
          len = (b[p + 1]! + 2) * 4;
          break;
        default: // 50 ESP, 59 No Next Header and every upper-layer protocol end the chain
          this.proto = nh;
          this.l4 = p;
          return -1;
      }
      if (n + 1 > MAX_EXT_HEADERS) return R['ipv6-ext-chain-too-long'];
      if (p + len > limit) return R['truncated-ipv6-ext'];
      nh = b[p]!;
      p += len;
    }
  }
}
