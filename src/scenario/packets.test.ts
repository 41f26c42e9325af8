import { spawnSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import { endpoint } from './endpoints.js';
import { ACK, FIN, FrameBuilder, RST, SYN, internetChecksum, onesComplementSum } from './packets.js';

const hex = (s: string) => Uint8Array.from(s.replace(/\s+/g, '').match(/../g)!.map((x) => parseInt(x, 16)));

describe('RFC 1071 checksum', () => {
  it('matches METHODS.md section 10 row 10 (IPv4 header example: 0xB861, re-sum 0xFFFF)', () => {
    const h = hex('4500 0073 0000 4000 4011 0000 C0A8 0001 C0A8 00C7');
    expect(internetChecksum(h, 0, 20)).toBe(0xb861);
    h[10] = 0xb8; h[11] = 0x61;
    expect(onesComplementSum(h, 0, 20)).toBe(0xffff);
  });

  it('matches METHODS.md section 10 row 11 (RFC 1071 section 3 words: folded 0xDDF2, checksum 0x220D)', () => {
    const w = hex('0001 F203 F4F5 F6F7');
    expect(onesComplementSum(w, 0, 8)).toBe(0xddf2);
    expect(internetChecksum(w, 0, 8)).toBe(0x220d);
  });
});

describe('FrameBuilder', () => {
  const a = endpoint('10.60.1.31', true), b = endpoint('203.0.113.200', false);
  const a6 = endpoint('2001:db8:60:3::31', true), b6 = endpoint('2001:db8:60::5', true);

  it('writes true IPv4 lengths and a valid header checksum behind Ethernet', () => {
    const fb = new FrameBuilder(1, 96);
    const wire = fb.tcp(a, b, 50000, 443, 1, 2, ACK, 1460);
    expect(wire).toBe(14 + 20 + 20 + 1460);
    const f = fb.buf;
    expect((f[12]! << 8) | f[13]!).toBe(0x0800);
    expect((f[16]! << 8) | f[17]!).toBe(20 + 20 + 1460); // RFC 791 total length
    expect(onesComplementSum(f, 14, 20)).toBe(0xffff); // RFC 1071: a correct header sums to 0xFFFF
    expect(f[14 + 20 + 13]).toBe(ACK);
  });

  it('uses the RFC 9293 flag octets (METHODS.md row 13: SYN-ACK 0x12, RST-ACK 0x14, FIN-ACK 0x11)', () => {
    const fb = new FrameBuilder(101, 96);
    fb.tcp(b, a, 443, 50000, 1, 2, SYN | ACK, 0);
    expect(fb.buf[33]).toBe(0x12);
    fb.tcp(b, a, 443, 50000, 1, 2, RST | ACK, 0);
    expect(fb.buf[33]).toBe(0x14);
    fb.tcp(b, a, 443, 50000, 1, 2, FIN | ACK, 0);
    expect(fb.buf[33]).toBe(0x11);
  });

  it('writes the IPv6 payload length (RFC 8200: excludes the 40-octet header) and zero payload bytes', () => {
    const fb = new FrameBuilder(101, 96);
    fb.udp(b, a, 53, 40000, 300); // dirty the payload area first with an IPv4 frame
    const wire = fb.tcp(a6, b6, 50000, 445, 7, 9, ACK, 1000);
    expect(wire).toBe(40 + 20 + 1000);
    expect(fb.buf[0]! >> 4).toBe(6);
    expect((fb.buf[4]! << 8) | fb.buf[5]!).toBe(20 + 1000);
    expect(fb.buf[6]).toBe(6);
    expect([...fb.buf.subarray(60, 96)].every((x) => x === 0)).toBe(true);
  });

  it('produces frames dpkt parses with correct IP, TCP, UDP and ICMP checksums (dpkt as reference)', () => {
    const fb = new FrameBuilder(1, 65535);
    const frames: string[] = [];
    const keep = (n: number) => frames.push(Buffer.from(fb.buf.subarray(0, n)).toString('hex'));
    keep(fb.tcp(a, b, 50000, 443, 123456, 654321, SYN, 0));
    keep(fb.tcp(a, b, 50000, 443, 123457, 654322, ACK, 100));
    keep(fb.udp(a, b, 40000, 53, 33));
    keep(fb.echo(a, b, false, 77, 1, 56));
    keep(fb.tcp(a6, b6, 50000, 445, 1, 1, ACK, 10));
    keep(fb.udp(a6, b6, 40000, 53, 20));
    keep(fb.echo(a6, b6, true, 5, 2, 56));
    const script = `
import sys, dpkt
for h in sys.stdin.read().split():
    raw = bytes.fromhex(h)
    e = dpkt.ethernet.Ethernet(raw)
    ip = e.data
    l4 = ip.data
    want = l4.sum
    l4.sum = 0
    if isinstance(ip, dpkt.ip.IP):
        ipsum = ip.sum; ip.sum = 0; ip.len = ip.len
        ok_ip = dpkt.ip.IP(bytes(ip)).sum == ipsum
    else:
        ok_ip = True
    got = dpkt.ethernet.Ethernet(bytes(e)).data.data.sum
    print(int(ok_ip), int(got == want))
`;
    const py = spawnSync('/usr/bin/python3', ['-c', script], { input: frames.join('\n'), encoding: 'utf8' });
    if (py.status !== 0 && /No module named/.test(py.stderr)) return; // dpkt missing: nothing to compare with
    expect(py.stderr).toBe('');
    expect(py.stdout.trim().split('\n')).toEqual(frames.map(() => '1 1'));
  });
});
