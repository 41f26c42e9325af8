/**
 * The peer DESIGN.md section 9 measures against: a plain hand-written loop that reads a classic
 * little-endian pcap in large chunks and aggregates bidirectional flows in a typed-array table, and
 * nothing more. Ethernet with one or two VLAN tags, IPv4 and IPv6 (no extension headers), TCP and UDP
 * ports; no fragments, ICMP quotes, TCP state, timeouts, window cuts, records or output. It shows, in
 * the same run as the others, how fast the least work that still counts flows goes on this machine.
 */
import { closeSync, openSync, readSync } from 'node:fs';

export interface PlainLoopResult {
  packets: number;
  /** Distinct bidirectional flows (5-tuples). */
  flows: number;
  /** Sum of IP-layer octets, so the loop cannot be optimised away. */
  bytes: number;
}

const CHUNK = 4 << 20;
const SLOTS = 1 << 20; // open addressing, power of two; far more than the bench capture's flows

export function plainLoop(path: string): PlainLoopResult {
  const fd = openSync(path, 'r');
  const buf = Buffer.allocUnsafe(CHUNK);
  // per slot: used, proto, lower address, higher address, ports (lower end's port << 16 | other's)
  const key = new Uint32Array(SLOTS * 5);
  const pkts = new Uint32Array(SLOTS * 2);
  const octets = new Float64Array(SLOTS * 2);
  const mask = SLOTS - 1;
  let packets = 0, flows = 0, bytes = 0;
  try {
    let have = readSync(fd, buf, 0, CHUNK, null);
    let off = 24;
    for (;;) {
      if (off + 16 > have || off + 16 + buf.readUInt32LE(off + 8) > have) {
        const rest = have - off;
        buf.copy(buf, 0, off, have);
        const n = readSync(fd, buf, rest, CHUNK - rest, null);
        if (n === 0) break;
        have = rest + n;
        off = 0;
        continue;
      }
      const cap = buf.readUInt32LE(off + 8);
      let p = off + 16;
      const end = p + cap;
      off = end;
      packets++;
      let type = (buf[p + 12]! << 8) | buf[p + 13]!;
      p += 14;
      while ((type === 0x8100 || type === 0x88a8) && p + 4 <= end) { type = (buf[p + 2]! << 8) | buf[p + 3]!; p += 4; }
      let a: number, b: number, proto: number, l4: number, len: number;
      if (type === 0x0800 && p + 20 <= end) {
        proto = buf[p + 9]!;
        len = (buf[p + 2]! << 8) | buf[p + 3]!;
        a = buf.readUInt32BE(p + 12);
        b = buf.readUInt32BE(p + 16);
        l4 = p + (buf[p]! & 15) * 4;
      } else if (type === 0x86dd && p + 40 <= end) {
        proto = buf[p + 6]!;
        len = ((buf[p + 4]! << 8) | buf[p + 5]!) + 40;
        // fold the 128-bit addresses to 32 bits: good enough for a key in a peer benchmark
        a = (buf.readUInt32BE(p + 8) ^ buf.readUInt32BE(p + 12) ^ buf.readUInt32BE(p + 16) ^ buf.readUInt32BE(p + 20)) >>> 0;
        b = (buf.readUInt32BE(p + 24) ^ buf.readUInt32BE(p + 28) ^ buf.readUInt32BE(p + 32) ^ buf.readUInt32BE(p + 36)) >>> 0;
        l4 = p + 40;
      } else continue;
      let sp = 0, dp = 0;
      if ((proto === 6 || proto === 17) && l4 + 4 <= end) { sp = (buf[l4]! << 8) | buf[l4 + 1]!; dp = (buf[l4 + 2]! << 8) | buf[l4 + 3]!; }
      bytes += len;
      // canonical order: the lower (address, port) end first; `dir` says which way this packet went
      const fwd = a < b || (a === b && sp <= dp);
      const lo = fwd ? a : b, hi = fwd ? b : a;
      const ports = (fwd ? (sp << 16) | dp : (dp << 16) | sp) >>> 0;
      let h = Math.imul(lo ^ Math.imul(hi, 0x9e3779b1) ^ Math.imul(ports, 0x85ebca6b) ^ proto, 0xc2b2ae35);
      h ^= h >>> 15;
      for (let i = h & mask; ; i = (i + 1) & mask) {
        const k = i * 5;
        if (key[k] === 0) {
          key[k] = 1; key[k + 1] = proto; key[k + 2] = lo; key[k + 3] = hi; key[k + 4] = ports;
          flows++;
        } else if (key[k + 1] !== proto || key[k + 2] !== lo || key[k + 3] !== hi || key[k + 4] !== ports) continue;
        const c = 2 * i + (fwd ? 0 : 1);
        pkts[c]!++;
        octets[c]! += len;
        break;
      }
    }
  } finally {
    closeSync(fd);
  }
  return { packets, flows, bytes };
}
