import { MAX_INTERFACES } from './limits.js';
import { fastUnitsPerSecond, nsPerUnit } from './timestamp.js';

/**
 * The interfaces of one pcapng section, in IDB order (IDs restart at 0 in each section). Typed arrays,
 * grown by doubling up to MAX_INTERFACES, so a packet looks its interface up without touching an object.
 */
export class InterfaceTable {
  count = 0;
  linkType = new Uint16Array(8);
  /** 0 = no limit (pcapng). */
  snaplen = new Uint32Array(8);
  /** Raw if_tsresol code. */
  tsresol = new Uint8Array(8);
  /** Units per second on the fast path; 0 = BigInt path. */
  units = new Float64Array(8);
  nsPer = new Float64Array(8);
  /** if_tsoffset, seconds. */
  offsetSec = new Float64Array(8);
  /** Latest isb_ifdrop + isb_osdrop (cumulative counters, so only the latest counts). */
  dropped = new Float64Array(8);

  reset(): void {
    this.count = 0;
  }

  /** Adds an interface; returns false when the table is full. */
  add(linkType: number, snaplen: number, tsresol: number, offsetSec: number): boolean {
    const i = this.count;
    if (i >= MAX_INTERFACES) return false;
    if (i === this.linkType.length) this.grow();
    const units = fastUnitsPerSecond(tsresol);
    this.linkType[i] = linkType;
    this.snaplen[i] = snaplen;
    this.tsresol[i] = tsresol;
    this.units[i] = units;
    this.nsPer[i] = units > 0 ? nsPerUnit(units) : 0;
    this.offsetSec[i] = offsetSec;
    this.dropped[i] = 0;
    this.count = i + 1;
    return true;
  }

  private grow(): void {
    const n = this.linkType.length * 2;
    this.linkType = copyInto(new Uint16Array(n), this.linkType);
    this.snaplen = copyInto(new Uint32Array(n), this.snaplen);
    this.tsresol = copyInto(new Uint8Array(n), this.tsresol);
    this.units = copyInto(new Float64Array(n), this.units);
    this.nsPer = copyInto(new Float64Array(n), this.nsPer);
    this.offsetSec = copyInto(new Float64Array(n), this.offsetSec);
    this.dropped = copyInto(new Float64Array(n), this.dropped);
  }
}

function copyInto<T extends { set(a: ArrayLike<number>): void }>(to: T, from: ArrayLike<number>): T {
  to.set(from);
  return to;
}
