import ipaddr from 'ipaddr.js';

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
    const v6 = a as ipaddr.IPv6;
    if (v6.isIPv4MappedAddress()) return v6.toIPv4Address().toString();
    return ipv6ToString(Uint8Array.from(v6.toByteArray()));
  }
  return (a as ipaddr.IPv4).toString();
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
  if (a.kind() === 'ipv6' && (a as ipaddr.IPv6).isIPv4MappedAddress()) {
    return Uint8Array.from((a as ipaddr.IPv6).toIPv4Address().toByteArray());
  }
  return Uint8Array.from(a.toByteArray());
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
 * A set of CIDRs with a membership test by address text. Callers on a hot path ask once per address
 * and keep the answer (window/aggregator.ts keeps it per interned address id).
 */
export class CidrSet {
  readonly cidrs: Cidr[];
  constructor(list: readonly string[]) {
    this.cidrs = [];
    for (const s of list) {
      const c = parseCidr(s);
      if (!c) throw new Error(`not a CIDR: ${s}`);
      this.cidrs.push(c);
    }
  }
  has(addr: string): boolean {
    const b = addrBytes(addr);
    return b !== null && this.cidrs.some((c) => inCidr(b, c));
  }
}

/** Multicast, broadcast and unspecified destinations are not hosts (METHODS.md section 9). */
export function isNonHost(addr: string): boolean {
  if (addr.includes(':')) return addr.startsWith('ff') || addr === '::';
  const first = Number(addr.slice(0, addr.indexOf('.')));
  return first >= 224 || first === 0 || addr === '255.255.255.255';
}
