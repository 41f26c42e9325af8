import { createRequire } from 'node:module';
import type IpAddr from 'ipaddr.js';

// Loaded with require, not import: an ES import of a CommonJS package has Node scan its source for
// export names, and V8 then compiles that scanner in every thread (about 0.1 s of CPU a replay).
const ipaddr = createRequire(import.meta.url)('ipaddr.js') as typeof IpAddr;

/** Dotted quad of an unsigned 32-bit IPv4 address. */
export function ipv4ToString(a: number): string {
  return `${a >>> 24}.${(a >>> 16) & 255}.${(a >>> 8) & 255}.${a & 255}`;
}

/** RFC 5952 text of 16 address octets at `off`; IPv4-mapped (::ffff:0:0/96) becomes dotted IPv4. */
export function ipv6ToString(b: Uint8Array, off = 0): string {
  let mapped = b[off + 10] === 0xff && b[off + 11] === 0xff;
  for (let i = 0; i < 10 && mapped; i++) if (b[off + i] !== 0) mapped = false;
  if (mapped) return `${b[off + 12]}.${b[off + 13]}.${b[off + 14]}.${b[off + 15]}`;
  const w: number[] = [];
  for (let i = 0; i < 8; i++) w.push((b[off + 2 * i]! << 8) | b[off + 2 * i + 1]!);
  // longest run of zero words (length >= 2), first one on ties (RFC 5952 section 4.2)
  let bestStart = -1, bestLen = 0;
  for (let i = 0; i < 8; ) {
    if (w[i] !== 0) { i++; continue; }
    let j = i;
    while (j < 8 && w[j] === 0) j++;
    if (j - i > bestLen && j - i >= 2) { bestStart = i; bestLen = j - i; }
    i = j;
  }
  const hex = (x: number) => x.toString(16);
  if (bestStart < 0) return w.map(hex).join(':');
  const head = w.slice(0, bestStart).map(hex).join(':');
  const tail = w.slice(bestStart + bestLen).map(hex).join(':');
  return `${head}::${tail}`;
}

/** Normalises any textual address (IPv4, IPv6, IPv4-mapped) to the form FlowRecord uses; null if invalid. */
export function normaliseAddress(s: string): string | null {
  if (!ipaddr.isValid(s)) return null;
  const a = ipaddr.parse(s);
  if (a.kind() === 'ipv6') {
    const v6 = a as IpAddr.IPv6;
    if (v6.isIPv4MappedAddress()) return v6.toIPv4Address().toString();
    return ipv6ToString(Uint8Array.from(v6.toByteArray()));
  }
  return (a as IpAddr.IPv4).toString();
}

export interface Cidr {
  text: string;
  v6: boolean;
  bytes: Uint8Array;
  bits: number;
}

/** Parses `A/N` (or a bare address as a host route); null when invalid. */
export function parseCidr(s: string): Cidr | null {
  try {
    const t = s.trim();
    const [addr, bits] = t.includes('/') ? ipaddr.parseCIDR(t) : [ipaddr.parse(t), -1];
    const v6 = addr.kind() === 'ipv6';
    const bytes = Uint8Array.from(addr.toByteArray());
    return { text: t, v6, bytes, bits: bits < 0 ? bytes.length * 8 : bits };
  } catch {
    return null;
  }
}

function addrBytes(s: string): Uint8Array | null {
  if (!ipaddr.isValid(s)) return null;
  const a = ipaddr.parse(s);
  if (a.kind() === 'ipv6' && (a as IpAddr.IPv6).isIPv4MappedAddress()) {
    return Uint8Array.from((a as IpAddr.IPv6).toIPv4Address().toByteArray());
  }
  return Uint8Array.from(a.toByteArray());
}

/**
 * The 32-bit value of canonical dotted-quad text (four decimal parts 0-255, no leading zeros), or -1
 * for anything else: other IPv4 spellings (octal, hex, fewer parts) are left to the full parser.
 */
export function parseIpv4(s: string): number {
  let v = 0, part = 0, digits = 0, dots = 0;
  for (let i = 0; i < s.length; i++) {
    const c = s.charCodeAt(i);
    if (c >= 48 && c <= 57) {
      if (digits > 0 && part === 0) return -1;
      part = part * 10 + (c - 48);
      if (part > 255) return -1;
      digits++;
    } else if (c === 46) {
      if (digits === 0 || ++dots > 3) return -1;
      v = v * 256 + part;
      part = 0; digits = 0;
    } else return -1;
  }
  if (dots !== 3 || digits === 0) return -1;
  return v * 256 + part;
}

/**
 * Plain IPv6 text (hex groups, at most one `::`) into 16 octets of `out`; false for anything else
 * (an embedded dotted quad, a zone, a malformed group), which is left to the full parser.
 */
export function parseIpv6(s: string, out: Uint8Array): boolean {
  let groups = 0, gap = -1, group = 0, hex = 0;
  const n = s.length;
  let i = 0;
  if (n >= 2 && s.charCodeAt(0) === 58 && s.charCodeAt(1) === 58) { gap = 0; i = 2; }
  else if (n > 0 && s.charCodeAt(0) === 58) return false;
  for (; i < n; i++) {
    const c = s.charCodeAt(i);
    let d: number;
    if (c >= 48 && c <= 57) d = c - 48;
    else if (c >= 97 && c <= 102) d = c - 87;
    else if (c >= 65 && c <= 70) d = c - 55;
    else if (c === 58) {
      if (hex === 0) return false;
      if (groups === 8) return false;
      out[2 * groups] = group >>> 8; out[2 * groups + 1] = group & 255;
      groups++; group = 0; hex = 0;
      if (i + 1 < n && s.charCodeAt(i + 1) === 58) {
        if (gap >= 0) return false;
        gap = groups;
        i++;
      } else if (i + 1 === n) return false;
      continue;
    } else return false;
    if (++hex > 4) return false;
    group = (group << 4) | d;
  }
  if (hex > 0) {
    if (groups === 8) return false;
    out[2 * groups] = group >>> 8; out[2 * groups + 1] = group & 255;
    groups++;
  }
  if (gap < 0) return groups === 8;
  if (groups > 7) return false;
  // move the groups after the gap to the end and zero the gap
  const shift = 8 - groups;
  for (let g = groups - 1; g >= gap; g--) { out[2 * (g + shift)] = out[2 * g]!; out[2 * (g + shift) + 1] = out[2 * g + 1]!; }
  for (let g = gap; g < gap + shift; g++) { out[2 * g] = 0; out[2 * g + 1] = 0; }
  return true;
}

function inCidr(b: Uint8Array, c: Cidr): boolean {
  if (b.length !== c.bytes.length) return false;
  let bits = c.bits;
  for (let i = 0; bits > 0; i++, bits -= 8) {
    const mask = bits >= 8 ? 0xff : (0xff << (8 - bits)) & 0xff;
    if ((b[i]! & mask) !== (c.bytes[i]! & mask)) return false;
  }
  return true;
}

/** Default inside networks: RFC 1918, RFC 4193 and loopback (DESIGN.md section 5). */
export const DEFAULT_INTERNAL = ['10.0.0.0/8', '172.16.0.0/12', '192.168.0.0/16', 'fc00::/7', '127.0.0.0/8', '::1/128'];

/**
 * A set of CIDRs with a membership test by address text. Canonical IPv4 and plain IPv6 text (what
 * flow records carry) is parsed here directly; other spellings go through ipaddr.js. Callers on a hot
 * path still ask once per address and keep the answer (window/aggregator.ts keeps it per address id).
 */
export class CidrSet {
  readonly cidrs: Cidr[];
  /** IPv4 networks as (network, mask) pairs of 32-bit values. */
  private readonly v4: Uint32Array;
  private readonly v6: Cidr[];
  private readonly scratch = new Uint8Array(16);
  constructor(list: readonly string[]) {
    this.cidrs = [];
    for (const s of list) {
      const c = parseCidr(s);
      if (!c) throw new Error(`not a CIDR: ${s}`);
      this.cidrs.push(c);
    }
    const v4 = this.cidrs.filter((c) => !c.v6);
    this.v4 = new Uint32Array(2 * v4.length);
    v4.forEach((c, i) => {
      const mask = c.bits === 0 ? 0 : (0xffffffff << (32 - c.bits)) >>> 0;
      const net = ((c.bytes[0]! << 24) | (c.bytes[1]! << 16) | (c.bytes[2]! << 8) | c.bytes[3]!) >>> 0;
      this.v4[2 * i] = (net & mask) >>> 0;
      this.v4[2 * i + 1] = mask;
    });
    this.v6 = this.cidrs.filter((c) => c.v6);
  }
  has(addr: string): boolean {
    const a4 = parseIpv4(addr);
    if (a4 >= 0) return this.hasV4(a4);
    const b = this.scratch;
    if (parseIpv6(addr, b)) {
      let mapped = b[10] === 0xff && b[11] === 0xff;
      for (let i = 0; i < 10 && mapped; i++) if (b[i] !== 0) mapped = false;
      if (mapped) return this.hasV4(((b[12]! << 24) | (b[13]! << 16) | (b[14]! << 8) | b[15]!) >>> 0);
      for (const c of this.v6) if (inCidr(b, c)) return true;
      return false;
    }
    const full = addrBytes(addr);
    return full !== null && this.cidrs.some((c) => inCidr(full, c));
  }
  /**
   * The directed broadcast of one of the IPv4 prefixes, /8 to /30: its host part all ones (RFC 1122
   * section 3.2.1.3, from memory). Traffic to it reaches every host of the subnet, no one host.
   */
  isBroadcast(addr: string): boolean {
    const a = parseIpv4(addr);
    if (a < 0) return false;
    const t = this.v4;
    for (let i = 0; i < t.length; i += 2) {
      const mask = t[i + 1]!;
      const hostBits = (~mask) >>> 0;
      if (hostBits >= 3 && hostBits <= 0xffffff && ((t[i]! | hostBits) >>> 0) === a) return true;
    }
    return false;
  }

  private hasV4(a: number): boolean {
    const t = this.v4;
    for (let i = 0; i < t.length; i += 2) if (((a & t[i + 1]!) >>> 0) === t[i]) return true;
    return false;
  }
}

/**
 * Host bits of the widest prefix, /8 to /30, whose directed broadcast (host part all ones, RFC 1122
 * section 3.2.1.3, from memory) the IPv4 address `a` is: its trailing one bits, at most 24; 0 when it
 * has fewer than 2 (no /8 to /30 prefix has it as its broadcast).
 */
export function broadcastHostBits(a: number): number {
  let k = 0;
  while (k < 24 && Math.floor(a / 2 ** k) % 2 === 1) k++;
  return k >= 2 ? k : 0;
}

/** Multicast, broadcast and unspecified destinations are not hosts (METHODS.md section 9). */
export function isNonHost(addr: string): boolean {
  if (addr.includes(':')) return addr.startsWith('ff') || addr === '::';
  const first = Number(addr.slice(0, addr.indexOf('.')));
  return first >= 224 || first === 0 || addr === '255.255.255.255';
}
