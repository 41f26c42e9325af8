import { closeSync, openSync, writeSync } from 'node:fs';

/**
 * Deterministic benchmark capture: a classic little-endian microsecond pcap (draft-ietf-opsawg-pcap) of
 * Ethernet frames. About 500 inside hosts (10.60.0.0/22 and 2001:db8:60:1::/64) talk to about 5000
 * outside addresses (198.51.100.0/24, 203.0.113.0/24, 192.0.2.0/24 and 2001:db8:60:f000::/52): TCP
 * sessions with handshakes, data and teardowns (some refused, some unanswered), DNS over UDP, ICMP echo
 * and port-unreachable answers to UDP probes; 5% of flows IPv6, 5% VLAN-tagged. IP lengths are true;
 * the snap length cuts payloads. Frames are written straight into one large reused buffer.
 */
export interface GenOptions {
  packets: number;
  seed: number;
  snaplen: number;
  /** Flows in progress at once (interleaving). */
  concurrent: number;
}

export const DEFAULT_GEN: GenOptions = { packets: 3_000_000, seed: 0x5eed, snaplen: 128, concurrent: 3000 };

export interface GenResult { path: string; packets: number; flows: number; fileBytes: number; ipBytes: number }

const T0_SEC = 1_700_000_000;
const CHUNK = 8 << 20;
const INSIDE = 500;
const OUTSIDE_V4 = 768;
const OUTSIDE_V6 = 4232;
/** 198.51.100.0/24, 203.0.113.0/24, 192.0.2.0/24 (RFC 5737). */
const OUTSIDE_NETS = [0xc6336400, 0xcb007100, 0xc0000200];
const SERVER_PORTS = [443, 443, 443, 443, 443, 443, 80, 80, 22, 25, 993, 3389, 8080, 8443];

const enum Kind { Tcp = 0, TcpRefused = 1, TcpUnanswered = 2, Dns = 3, Echo = 4, Probe = 5 }

/** mulberry32: small, fast, seeded (public-domain generator; common practice for reproducible tests). */
function prng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

export function generateCapture(path: string, o: GenOptions = DEFAULT_GEN): GenResult {
  const rnd = prng(o.seed);
  const fd = openSync(path, 'w');
  const buf = new Uint8Array(CHUNK);
  const dv = new DataView(buf.buffer);
  let used = 0;
  let fileBytes = 0;
  const flush = () => { writeSync(fd, buf, 0, used); fileBytes += used; used = 0; };

  // pcap file header: magic, 2.4, reserved, snaplen, LINKTYPE_ETHERNET
  dv.setUint32(0, 0xa1b2c3d4, true);
  dv.setUint16(4, 2, true);
  dv.setUint16(6, 4, true);
  dv.setUint32(16, o.snaplen, true);
  dv.setUint32(20, 1, true);
  used = 24;

  // per-slot flow state
  const K = o.concurrent;
  const kind = new Uint8Array(K), step = new Uint16Array(K), dataLeft = new Uint16Array(K);
  const inside = new Uint16Array(K), outside = new Uint16Array(K), cport = new Uint16Array(K), sport = new Uint16Array(K);
  const v6 = new Uint8Array(K), vlan = new Uint16Array(K), tear = new Uint8Array(K);
  let flows = 0;
  const start = (k: number) => {
    flows++;
    const r = rnd();
    kind[k] = r < 0.62 ? Kind.Tcp : r < 0.66 ? Kind.TcpRefused : r < 0.68 ? Kind.TcpUnanswered : r < 0.94 ? Kind.Dns : r < 0.985 ? Kind.Echo : Kind.Probe;
    step[k] = 0;
    tear[k] = 0;
    dataLeft[k] = 2 + Math.floor(-Math.log(1 - rnd()) * 14);
    v6[k] = rnd() < 0.05 ? 1 : 0;
    vlan[k] = rnd() < 0.05 ? 10 + 10 * Math.floor(rnd() * 3) : 0;
    inside[k] = Math.floor(rnd() * INSIDE);
    outside[k] = v6[k] ? Math.floor(rnd() * OUTSIDE_V6) : Math.floor(rnd() * OUTSIDE_V4);
    cport[k] = 32768 + Math.floor(rnd() * 28000);
    sport[k] = kind[k] === Kind.Dns ? 53 : kind[k] === Kind.Probe ? 33434 + Math.floor(rnd() * 30) : SERVER_PORTS[Math.floor(rnd() * SERVER_PORTS.length)]!;
  };
  for (let k = 0; k < K; k++) start(k);

  let usec = 0;
  let written = 0;
  let ipBytes = 0;
  let ipId = 1;

  /** Appends one record; `out` = sent by the inside host. */
  const frame = (k: number, out: boolean, proto: number, ipLen: number, tcpFlags: number, icmpType: number, icmpCode: number) => {
    const tagged = vlan[k]! > 0;
    const l2 = 14 + (tagged ? 4 : 0);
    const isV6 = v6[k] === 1;
    const frameLen = l2 + ipLen;
    const capLen = frameLen < o.snaplen ? frameLen : o.snaplen;
    if (used + 16 + capLen > CHUNK) flush();
    usec += 1 + Math.floor(-Math.log(1 - rnd()) * 200);
    dv.setUint32(used, T0_SEC + Math.floor(usec / 1e6), true);
    dv.setUint32(used + 4, usec % 1e6, true);
    dv.setUint32(used + 8, capLen, true);
    dv.setUint32(used + 12, frameLen, true);
    let p = used + 16;
    const end = p + capLen;
    buf.fill(0, p, end);
    // MACs, optional 802.1Q tag, EtherType
    buf[p] = 0x02; buf[p + 5] = out ? 1 : 2; buf[p + 6] = 0x02; buf[p + 11] = out ? 2 : 1;
    p += 12;
    if (tagged) { dv.setUint16(p, 0x8100); dv.setUint16(p + 2, vlan[k]!); p += 4; }
    dv.setUint16(p, isV6 ? 0x86dd : 0x0800);
    p += 2;
    const h = inside[k]!, x = outside[k]!;
    let l4: number;
    if (!isV6) {
      const hostA = ((10 << 24) | (60 << 16) | ((h >> 7) << 8) | ((h & 127) + 1)) >>> 0;
      const hostB = (OUTSIDE_NETS[x >> 8]! | (x & 255)) >>> 0;
      buf[p] = 0x45;
      dv.setUint16(p + 2, ipLen);
      dv.setUint16(p + 4, ipId = (ipId + 1) & 0xffff);
      buf[p + 6] = 0x40; // DF
      buf[p + 8] = 64;
      buf[p + 9] = proto;
      dv.setUint32(p + 12, out ? hostA : hostB);
      dv.setUint32(p + 16, out ? hostB : hostA);
      l4 = p + 20;
    } else {
      buf[p] = 0x60;
      dv.setUint16(p + 4, ipLen - 40);
      buf[p + 6] = proto;
      buf[p + 7] = 64;
      const a = out ? p + 8 : p + 24, b = out ? p + 24 : p + 8;
      dv.setUint32(a, 0x20010db8); dv.setUint32(a + 4, 0x00600001); dv.setUint32(a + 12, h + 1);
      dv.setUint32(b, 0x20010db8); dv.setUint32(b + 4, 0x0060f000 | (x >> 8)); dv.setUint32(b + 12, (x & 255) + 1);
      l4 = p + 40;
    }
    if (proto === 6 && l4 + 20 <= end) {
      dv.setUint16(l4, out ? cport[k]! : sport[k]!);
      dv.setUint16(l4 + 2, out ? sport[k]! : cport[k]!);
      dv.setUint32(l4 + 4, usec >>> 0);
      buf[l4 + 12] = 0x50;
      buf[l4 + 13] = tcpFlags;
      dv.setUint16(l4 + 14, 64240);
    } else if (proto === 17 && l4 + 8 <= end) {
      dv.setUint16(l4, out ? cport[k]! : sport[k]!);
      dv.setUint16(l4 + 2, out ? sport[k]! : cport[k]!);
      dv.setUint16(l4 + 4, ipLen - (isV6 ? 40 : 20));
    } else if ((proto === 1 || proto === 58) && l4 + 8 <= end) {
      buf[l4] = icmpType;
      buf[l4 + 1] = icmpCode;
      if (icmpType === 3 || icmpType === 1) {
        // quote the probe: original IP header (inside -> outside) + 8 octets of UDP header
        const q = l4 + 8;
        const qLen = isV6 ? 48 : 28;
        if (q + qLen <= end) {
          if (!isV6) {
            buf[q] = 0x45; dv.setUint16(q + 2, 40); buf[q + 8] = 1; buf[q + 9] = 17;
            dv.setUint32(q + 12, dv.getUint32(l4 - 4)); dv.setUint32(q + 16, dv.getUint32(l4 - 8));
          } else {
            buf[q] = 0x60; dv.setUint16(q + 4, 20); buf[q + 6] = 17; buf[q + 7] = 1;
            buf.copyWithin(q + 8, l4 - 16, l4); buf.copyWithin(q + 24, l4 - 32, l4 - 16);
          }
          const u = q + qLen - 8;
          dv.setUint16(u, cport[k]!); dv.setUint16(u + 2, sport[k]!); dv.setUint16(u + 4, 20);
        }
      }
    }
    used = end;
    ipBytes += ipLen;
    written++;
  };

  const hdr = (k: number) => (v6[k] ? 40 : 20);
  const SYN = 0x02, ACK = 0x10, PSH = 0x08, FIN = 0x01, RST = 0x04;
  while (written < o.packets) {
    const k = Math.floor(rnd() * K);
    const s = step[k]!++;
    const ih = hdr(k);
    let done = false;
    switch (kind[k]) {
      case Kind.Tcp:
        if (s === 0) frame(k, true, 6, ih + 20, SYN, 0, 0);
        else if (s === 1) frame(k, false, 6, ih + 20, SYN | ACK, 0, 0);
        else if (s === 2) frame(k, true, 6, ih + 20, ACK, 0, 0);
        else if (dataLeft[k]! > 0) {
          dataLeft[k]!--;
          const down = rnd() < 0.7;
          const payload = rnd() < 0.6 ? 1460 : Math.floor(rnd() * 600);
          frame(k, !down, 6, ih + 20 + payload, payload > 0 ? PSH | ACK : ACK, 0, 0);
        } else {
          if (tear[k]++ === 0) frame(k, true, 6, ih + 20, FIN | ACK, 0, 0);
          else {
            // the answering FIN and the last ACK follow within a round trip, not after other flows' turns
            frame(k, false, 6, ih + 20, FIN | ACK, 0, 0);
            if (written < o.packets) frame(k, true, 6, ih + 20, ACK, 0, 0);
            done = true;
          }
        }
        break;
      case Kind.TcpRefused:
        if (s === 0) frame(k, true, 6, ih + 20, SYN, 0, 0);
        else { frame(k, false, 6, ih + 20, RST | ACK, 0, 0); done = true; }
        break;
      case Kind.TcpUnanswered:
        frame(k, true, 6, ih + 20, SYN, 0, 0);
        done = s === 2;
        break;
      case Kind.Dns:
        if (s === 0) frame(k, true, 17, ih + 8 + 30 + Math.floor(rnd() * 20), 0, 0, 0);
        else { frame(k, false, 17, ih + 8 + 60 + Math.floor(rnd() * 250), 0, 0, 0); done = true; }
        break;
      case Kind.Echo:
        // request (8 / 128) and reply (0 / 129), two rounds
        frame(k, s % 2 === 0, v6[k] ? 58 : 1, ih + 64, 0, s % 2 === 0 ? (v6[k] ? 128 : 8) : (v6[k] ? 129 : 0), 0);
        done = s === 3;
        break;
      default: // Probe: a UDP datagram to a closed port and the port unreachable
        if (s === 0) frame(k, true, 17, ih + 8 + 12, 0, 0, 0);
        else { frame(k, false, v6[k] ? 58 : 1, ih + 8 + (v6[k] ? 48 : 28), 0, v6[k] ? 1 : 3, v6[k] ? 4 : 3); done = true; }
    }
    if (done) start(k);
  }
  if (used > 0) flush();
  closeSync(fd);
  return { path, packets: o.packets, flows, fileBytes, ipBytes };

}
