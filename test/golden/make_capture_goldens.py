#!/usr/bin/python3
"""Writes tidewatch's capture goldens and, independently, the flows they should produce.

Run with Debian's python3 (scapy and dpkt installed there):

    /usr/bin/python3 test/golden/make_capture_goldens.py [--out DIR]

DIR defaults to test/golden/captures beside this script. For every golden it writes
  DIR/<name>.pcap or .pcapng  built with scapy (packets; pcap files through scapy's RawPcapWriter;
                              the pcapng file block by block with struct, layout in METHODS.md 1.2)
  DIR/<name>.flows.json       the expected flows, computed by READING THE FILE BACK with dpkt
                              (pcap reader, link layers, IP, IPv6, TCP, UDP, ICMP dissection) and
                              aggregating with the small flow table below.
Two cross-checks with scapy run on every generation: per pcap file, the packets and IP-layer octets
summed over the expected flows must equal scapy's own read-back; for the pcapng file, this script's
block walk must yield the same (timestamp, frame) list as scapy's PcapNgReader.
The flow table implements the conventions written in src/flow/record.ts; it is written from those
conventions, not from the TypeScript. Output is deterministic: fixed timestamps, fixed IP ids and
sequence numbers, no randomness, so a re-run reproduces every file byte for byte.

Every golden lies inside one 60 s window that starts at an epoch multiple of 60 (1700000040 s), so
each flow is exactly one record under the default --window 60.
"""
import argparse
import ipaddress
import json
import logging
import os
import struct
import zlib
from decimal import Decimal

import dpkt
from scapy.layers.inet import ICMP, IP, TCP, UDP, IPOption_NOP, IPOption_RR, fragment
from scapy.layers.inet6 import (ICMPv6DestUnreach, ICMPv6EchoReply, ICMPv6EchoRequest, ICMPv6TimeExceeded, IPv6,
                                IPv6ExtHdrDestOpt, IPv6ExtHdrFragment, IPv6ExtHdrHopByHop,
                                IPv6ExtHdrRouting)
from scapy.layers.l2 import ARP, LLC, STP, CookedLinux, CookedLinuxV2, Dot1AD, Dot1Q, Dot3, Ether, Loopback
from scapy.contrib.erspan import ERSPAN_II, ERSPAN_III, ERSPAN_PlatformSpecific
from scapy.contrib.geneve import GENEVE
from scapy.contrib.mpls import MPLS
from scapy.layers.l2 import GRE
from scapy.layers.vxlan import VXLAN
from scapy.layers.ppp import PPP, PPPoE
from scapy.packet import Raw
from scapy.utils import PcapNgReader, RawPcapWriter, rdpcap

logging.getLogger('scapy.runtime').setLevel(logging.ERROR)  # quiet "unknown LL type 108" on read-back

T0 = 1700000040  # 28333334 * 60: a window boundary
MAC_A = '02:00:00:00:00:0a'
MAC_B = '02:00:00:00:00:0b'

# Link types (METHODS.md 1.3).
LT_NULL, LT_ETHERNET, LT_RAW, LT_LOOP, LT_SLL, LT_SLL2 = 0, 1, 101, 108, 113, 276
LT_PPP, LT_C_HDLC = 9, 104
# BSD address families: IPv4 is 2 everywhere; IPv6 is 24 (NetBSD/OpenBSD), 28 (FreeBSD), 30 (macOS).
AF_INET = 2


# --------------------------------------------------------------------------------------------
# Part 1: packets (scapy) and link-layer framing
# --------------------------------------------------------------------------------------------

def ethertype(ip_pkt):
    return 0x86DD if isinstance(ip_pkt, IPv6) else 0x0800


def frame(linktype, ip_pkt, outbound=False, af6=24):
    """One link-layer frame carrying ip_pkt; outbound swaps the MACs / sets the SLL packet type to 4."""
    af = af6 if isinstance(ip_pkt, IPv6) else AF_INET
    if linktype == LT_ETHERNET:
        src, dst = (MAC_A, MAC_B) if not outbound else (MAC_B, MAC_A)
        return bytes(Ether(src=src, dst=dst) / ip_pkt)
    if linktype == LT_RAW:
        return bytes(ip_pkt)
    if linktype == LT_SLL:
        return bytes(CookedLinux(pkttype=4 if outbound else 0, lladdrtype=1, lladdrlen=6,
                                 src=bytes.fromhex('02000000000a0000'), proto=ethertype(ip_pkt))
                     / ip_pkt)
    if linktype == LT_SLL2:
        return bytes(CookedLinuxV2(proto=ethertype(ip_pkt), ifindex=2, lladdrtype=1,
                                   pkttype=4 if outbound else 0, lladdrlen=6,
                                   src=bytes.fromhex('02000000000a0000')) / ip_pkt)
    if linktype == LT_NULL:
        # scapy's Loopback writes the family little-endian (the host order of the machine we model).
        return bytes(Loopback(type=af) / ip_pkt)
    if linktype == LT_LOOP:
        # LINKTYPE_LOOP: the family is always big-endian, so struct rather than scapy's host-order field.
        return struct.pack('>I', af) + bytes(ip_pkt)
    if linktype == LT_PPP:
        # PPP in HDLC-like framing (RFC 1662): address FF, control 03, protocol 0x0021 / 0x0057
        return bytes(PPP(proto=0x57 if isinstance(ip_pkt, IPv6) else 0x21) / ip_pkt) if outbound else \
            b'\xff\x03' + bytes(PPP(proto=0x57 if isinstance(ip_pkt, IPv6) else 0x21) / ip_pkt)
    if linktype == LT_C_HDLC:
        # Cisco HDLC: address 0F (unicast), control 00, then an EtherType (no scapy layer: struct)
        return struct.pack('>BBH', 0x0F, 0x00, ethertype(ip_pkt)) + bytes(ip_pkt)
    raise ValueError(linktype)


def tcp(src, dst, sport, dport, flags, seq, ack=0, payload=b''):
    pkt = IP(src=src, dst=dst, id=seq & 0xFFFF) / TCP(sport=sport, dport=dport, flags=flags, seq=seq, ack=ack, window=64240)
    return pkt / Raw(payload) if payload else pkt


def udp(src, dst, sport, dport, payload, ipv6=False, ip_id=1):
    ip_layer = IPv6(src=src, dst=dst) if ipv6 else IP(src=src, dst=dst, id=ip_id)
    return ip_layer / UDP(sport=sport, dport=dport) / Raw(payload)


def quote_v4(orig):
    """RFC 792: an ICMP error carries the offending IP header plus the first 8 octets of its data."""
    raw = bytes(orig)
    return raw[:(raw[0] & 0x0F) * 4 + 8]


def udp_exchange(linktype, client, server, sport, dport, ipv6=False, t=0, af6=24):
    """A request and its answer: (time offset in µs, frame) pairs."""
    return [
        (t, frame(linktype, udp(client, server, sport, dport, b'query-' + bytes([65 + sport % 26]) * 20,
                                ipv6, ip_id=sport), af6=af6)),
        (t + 1500, frame(linktype, udp(server, client, dport, sport, b'answer' * 12, ipv6, ip_id=dport),
                         outbound=True, af6=af6)),
    ]


def tcp_session(linktype, client, server, sport, dport, t=0):
    """Full handshake, one request, one response, FIN both ways, last ACK."""
    c, s = 1000, 5000
    req, resp = b'hello from client\n' * 3, b'greetings from server\n' * 10
    pkts = [
        (client, server, sport, dport, 'S', c, 0, b''),
        (server, client, dport, sport, 'SA', s, c + 1, b''),
        (client, server, sport, dport, 'A', c + 1, s + 1, b''),
        (client, server, sport, dport, 'PA', c + 1, s + 1, req),
        (server, client, dport, sport, 'A', s + 1, c + 1 + len(req), b''),
        (server, client, dport, sport, 'PA', s + 1, c + 1 + len(req), resp),
        (client, server, sport, dport, 'A', c + 1 + len(req), s + 1 + len(resp), b''),
        (client, server, sport, dport, 'FA', c + 1 + len(req), s + 1 + len(resp), b''),
        (server, client, dport, sport, 'FA', s + 1 + len(resp), c + 2 + len(req), b''),
        (client, server, sport, dport, 'A', c + 2 + len(req), s + 2 + len(resp), b''),
    ]
    out = []
    for i, (a, b, sp, dp, fl, seq, ack, data) in enumerate(pkts):
        out.append((t + i * 2000, frame(linktype, tcp(a, b, sp, dp, fl, seq, ack, data),
                                        outbound=a == server)))
    return out


def golden_ethernet():
    lt = LT_ETHERNET
    echo_req = IP(src='192.0.2.10', dst='198.51.100.20', id=7) / ICMP(type=8, id=0x77, seq=1) / Raw(b'ping' * 8)
    echo_rep = IP(src='198.51.100.20', dst='192.0.2.10', id=8) / ICMP(type=0, id=0x77, seq=1) / Raw(b'ping' * 8)
    echo6_req = IPv6(src='2001:db8::10', dst='2001:db8::20') / ICMPv6EchoRequest(id=5, seq=1, data=b'six' * 10)
    echo6_rep = IPv6(src='2001:db8::20', dst='2001:db8::10') / ICMPv6EchoReply(id=5, seq=1, data=b'six' * 10)
    pkts = udp_exchange(lt, '192.0.2.10', '198.51.100.53', 40001, 53, t=100_000)
    pkts += [(200_000, frame(lt, echo_req)), (201_000, frame(lt, echo_rep, outbound=True))]
    pkts += [(300_000, frame(lt, echo6_req)), (300_800, frame(lt, echo6_rep, outbound=True))]
    pkts += [(400_000, frame(lt, udp('192.0.2.10', '203.0.113.9', 40002, 514, b'one-way log line')))]
    pkts += udp_exchange(lt, '2001:db8::10', '2001:db8::53', 40003, 53, ipv6=True, t=500_000)
    return pkts


def golden_link(lt, af6=24):
    """The same small mix (IPv4 and IPv6 UDP exchanges, one TCP handshake) on another link type."""
    pkts = udp_exchange(lt, '192.0.2.11', '198.51.100.53', 41001, 53, t=100_000, af6=af6)
    pkts += udp_exchange(lt, '2001:db8::11', '2001:db8::53', 41002, 53, ipv6=True, t=200_000, af6=af6)
    pkts += [(300_000, frame(lt, tcp('192.0.2.11', '198.51.100.80', 41003, 8080, 'S', 7000), af6=af6)),
             (300_900, frame(lt, tcp('198.51.100.80', '192.0.2.11', 8080, 41003, 'SA', 9000, 7001),
                             outbound=True, af6=af6)),
             (301_800, frame(lt, tcp('192.0.2.11', '198.51.100.80', 41003, 8080, 'A', 7001, 9001), af6=af6))]
    return pkts


def golden_null():
    """DLT_NULL, family in little-endian host order; IPv6 under all three BSD family values."""
    pkts = udp_exchange(LT_NULL, '192.0.2.12', '198.51.100.53', 42001, 53, t=100_000)
    for i, af6 in enumerate((24, 28, 30)):
        pkts += udp_exchange(LT_NULL, '2001:db8::12', '2001:db8::53', 42010 + i, 53, ipv6=True,
                             t=200_000 + i * 100_000, af6=af6)
    return pkts


def vlan_frame(ip_pkt, tags, outbound=False):
    """tags: outermost first, as (TPID, VID)."""
    src, dst = (MAC_A, MAC_B) if not outbound else (MAC_B, MAC_A)
    layer = Ether(src=src, dst=dst, type=tags[0][0])
    for i, (_, vid) in enumerate(tags):
        next_type = tags[i + 1][0] if i + 1 < len(tags) else ethertype(ip_pkt)
        tag_cls = Dot1AD if tags[i][0] == 0x88A8 else Dot1Q
        layer = layer / tag_cls(vlan=vid, prio=0, type=next_type)
    return bytes(layer / ip_pkt)


def golden_vlan(tags):
    a, b = '10.20.0.5', '10.20.0.53'
    pkts = [(100_000, vlan_frame(udp(a, b, 43001, 53, b'vlan query' * 3, ip_id=1), tags)),
            (101_000, vlan_frame(udp(b, a, 53, 43001, b'vlan answer' * 5, ip_id=2), tags, True)),
            (200_000, vlan_frame(tcp(a, '10.20.0.80', 43002, 80, 'S', 100), tags)),
            (200_500, vlan_frame(tcp('10.20.0.80', a, 80, 43002, 'RA', 0, 101), tags, True)),
            (300_000, vlan_frame(udp('2001:db8:20::5', '2001:db8:20::53', 43003, 53, b'v6 in a vlan',
                                     ipv6=True), tags))]
    return pkts


def golden_ipv4_fragments():
    lt = LT_ETHERNET
    whole = IP(src='192.0.2.30', dst='198.51.100.30', id=0x1234) / UDP(sport=44001, dport=5353) / Raw(b'F' * 1192)
    frags = fragment(whole, fragsize=400)  # 1200 octets of UDP: 400 + 400 + 400, MF on the first two
    assert len(frags) == 3
    pkts = [(100_000 + i * 300, frame(lt, f)) for i, f in enumerate(frags)]
    pkts.append((102_000, frame(lt, udp('198.51.100.30', '192.0.2.30', 5353, 44001, b'ok', ip_id=9),
                                outbound=True)))
    # A non-first fragment (offset 800 octets) whose first fragment never arrived: no ports to read.
    orphan = IP(src='192.0.2.30', dst='198.51.100.30', id=0x2222, frag=100, flags=0, proto=17) / Raw(b'G' * 200)
    pkts.append((200_000, frame(lt, orphan)))
    return pkts


def golden_ipv6_ext_headers():
    lt = LT_ETHERNET
    a, b = '2001:db8:6::a', '2001:db8:6::b'
    chain = (IPv6(src=a, dst=b) / IPv6ExtHdrHopByHop() / IPv6ExtHdrDestOpt()
             / IPv6ExtHdrRouting(addresses=['2001:db8:6::1'], segleft=0)
             / IPv6ExtHdrFragment(offset=0, m=0, id=0x600D)  # atomic fragment (RFC 8200 4.5)
             / UDP(sport=45001, dport=7) / Raw(b'through four extension headers'))
    answer = IPv6(src=b, dst=a) / UDP(sport=7, dport=45001) / Raw(b'plain answer')
    syn = IPv6(src=a, dst=b) / IPv6ExtHdrHopByHop() / TCP(sport=45002, dport=22, flags='S', seq=1)
    synack = IPv6(src=b, dst=a) / IPv6ExtHdrDestOpt() / TCP(sport=22, dport=45002, flags='SA', seq=50, ack=2)
    ack = IPv6(src=a, dst=b) / TCP(sport=45002, dport=22, flags='A', seq=2, ack=51)
    return [(100_000, frame(lt, chain)), (101_000, frame(lt, answer, outbound=True)),
            (200_000, frame(lt, syn)), (200_400, frame(lt, synack, outbound=True)),
            (200_800, frame(lt, ack))]


def golden_ipv6_fragments():
    lt = LT_ETHERNET
    a, b = '2001:db8:6::c', '2001:db8:6::d'
    # Built under its IPv6 header so that scapy computes the UDP checksum over the real pseudo-header.
    datagram = bytes((IPv6(src=a, dst=b) / UDP(sport=45101, dport=5353) / Raw(b'H' * 992))[UDP])
    first = IPv6(src=a, dst=b) / IPv6ExtHdrFragment(nh=17, offset=0, m=1, id=0xF00D) / Raw(datagram[:504])
    second = IPv6(src=a, dst=b) / IPv6ExtHdrFragment(nh=17, offset=504 // 8, m=0, id=0xF00D) / Raw(datagram[504:])
    answer = IPv6(src=b, dst=a) / UDP(sport=5353, dport=45101) / Raw(b'got it')
    return [(100_000, frame(lt, first)), (100_300, frame(lt, second)),
            (101_000, frame(lt, answer, outbound=True))]


def golden_icmp_unreachable():
    """Port unreachable from the probed host; administratively prohibited (3/13) from a router, which
    is neither end of the TCP flow it quotes."""
    lt = LT_ETHERNET
    probe = udp('192.0.2.40', '198.51.100.40', 46001, 33434, b'probe' * 4, ip_id=40)
    err = IP(src='198.51.100.40', dst='192.0.2.40', id=41) / ICMP(type=3, code=3) / Raw(quote_v4(probe))
    syn = tcp('192.0.2.40', '198.51.100.41', 46002, 25, 'S', 4000)
    filtered = IP(src='203.0.113.1', dst='192.0.2.40', id=42) / ICMP(type=3, code=13) / Raw(quote_v4(syn))
    return [(100_000, frame(lt, probe)), (100_700, frame(lt, err, outbound=True)),
            (200_000, frame(lt, syn)), (200_900, frame(lt, filtered, outbound=True))]


def golden_icmp6_unreachable():
    """Port unreachable (1/4) from the probed host; administratively prohibited (1/1) from a router
    quoting a TCP SYN."""
    lt = LT_ETHERNET
    probe = udp('2001:db8:40::a', '2001:db8:40::b', 46101, 33434, b'probe6' * 4, ipv6=True)
    err = IPv6(src='2001:db8:40::b', dst='2001:db8:40::a') / ICMPv6DestUnreach(code=4) / Raw(bytes(probe))
    syn = IPv6(src='2001:db8:40::a', dst='2001:db8:40::c') / TCP(sport=46102, dport=25, flags='S', seq=4100)
    filtered = IPv6(src='2001:db8:40::1', dst='2001:db8:40::a') / ICMPv6DestUnreach(code=1) / Raw(bytes(syn))
    return [(100_000, frame(lt, probe)), (100_700, frame(lt, err, outbound=True)),
            (200_000, frame(lt, syn)), (200_900, frame(lt, filtered, outbound=True))]


def golden_icmp_time_exceeded():
    """Traceroute probes whose hop limit ran out: a UDP probe, a TCP SYN and an ICMP echo request
    answered by routers with ICMP time exceeded (11/0), an IPv6 UDP probe with ICMPv6 time exceeded
    (3/0): each probe is partial, each error its own flow (dport 2816, ICMPv6 768)."""
    lt = LT_ETHERNET
    probe = udp('192.0.2.50', '198.51.100.50', 47001, 33434, b'trace' * 4, ip_id=50)
    hop = IP(src='203.0.113.5', dst='192.0.2.50', id=51) / ICMP(type=11, code=0) / Raw(quote_v4(probe))
    syn = tcp('192.0.2.50', '198.51.100.50', 47002, 80, 'S', 5000)
    hop2 = IP(src='203.0.113.6', dst='192.0.2.50', id=52) / ICMP(type=11, code=0) / Raw(quote_v4(syn))
    probe6 = udp('2001:db8:50::a', '2001:db8:50::b', 47101, 33435, b'trace6' * 4, ipv6=True)
    hop6 = IPv6(src='2001:db8:50::1', dst='2001:db8:50::a') / ICMPv6TimeExceeded(code=0) / Raw(bytes(probe6))
    ping = IP(src='192.0.2.50', dst='198.51.100.51', id=53) / ICMP(type=8, id=0x50, seq=1) / Raw(b'hop' * 8)
    hop3 = IP(src='203.0.113.7', dst='192.0.2.50', id=54) / ICMP(type=11, code=0) / Raw(quote_v4(ping))
    return [(100_000, frame(lt, probe)), (100_400, frame(lt, hop, outbound=True)),
            (200_000, frame(lt, syn)), (200_500, frame(lt, hop2, outbound=True)),
            (300_000, frame(lt, probe6)), (300_600, frame(lt, hop6, outbound=True)),
            (400_000, frame(lt, ping)), (400_700, frame(lt, hop3, outbound=True))]


def golden_one_way_tcp():
    """One direction of a tap: a client's SYN, ACK, data and FIN with nothing seen back (established:
    its ACK implies the SYN-ACK), and a SYN alone (unanswered)."""
    lt = LT_ETHERNET
    c, s = '192.0.2.60', '198.51.100.60'
    pkts = [tcp(c, s, 48001, 443, 'S', 6000), tcp(c, s, 48001, 443, 'A', 6001, 9001),
            tcp(c, s, 48001, 443, 'PA', 6001, 9001, b'G' * 120), tcp(c, s, 48001, 443, 'FA', 6121, 9001),
            tcp(c, s, 48002, 443, 'S', 7000)]
    return [(100_000 + 1_000 * i, frame(lt, p)) for i, p in enumerate(pkts)]


def golden_ipv6_addresses():
    """Text forms (RFC 5952: longest zero run compressed, the first on a tie, no single-field '::',
    lower case) and IPv4-mapped addresses, which the FlowRecord carries as IPv4."""
    lt = LT_ETHERNET
    pkts = udp_exchange(lt, '2001:db8:0:0:1:0:0:1', '2001:db8:0:1:0:0:0:1', 58001, 53, ipv6=True, t=100_000)
    pkts += [(200_000, frame(lt, udp('2001:db8:0:1:1:1:1:1', '2001:DB8:AAAA:BBBB:CCCC:DDDD:EEEE:1',
                                     58002, 514, b'to an upper-case spelled address', ipv6=True)))]
    pkts += udp_exchange(lt, '::ffff:192.0.2.160', '::ffff:198.51.100.160', 58003, 53, ipv6=True, t=300_000)
    return pkts


def golden_tcp_refused():
    lt = LT_ETHERNET
    a, b = '192.0.2.50', '198.51.100.50'
    return [(100_000, frame(lt, tcp(a, b, 47001, 23, 'S', 3000))),
            (100_400, frame(lt, tcp(b, a, 23, 47001, 'RA', 0, 3001), outbound=True))]


def golden_tcp_outcomes():
    """The other TCP outcomes: unanswered SYNs, a half-open handshake, a capture joined mid-stream."""
    lt = LT_ETHERNET
    a = '192.0.2.51'
    return [
        (100_000, frame(lt, tcp(a, '198.51.100.51', 47101, 443, 'S', 10))),
        (1_100_000, frame(lt, tcp(a, '198.51.100.51', 47101, 443, 'S', 10))),  # retransmitted SYN
        (2_000_000, frame(lt, tcp(a, '198.51.100.52', 47102, 443, 'S', 20))),
        (2_000_300, frame(lt, tcp('198.51.100.52', a, 443, 47102, 'SA', 90, 21), outbound=True)),
        (3_000_000, frame(lt, tcp(a, '198.51.100.53', 47103, 443, 'PA', 500, 800, b'mid-stream data'))),
        (3_000_200, frame(lt, tcp('198.51.100.53', a, 443, 47103, 'A', 800, 515), outbound=True)),
    ]


def golden_tcp_session():
    return tcp_session(LT_ETHERNET, '192.0.2.60', '198.51.100.60', 48001, 8000, t=100_000)


def golden_snaplen():
    """Frames cut at 64 octets by the capture; the IP length fields still say the real size."""
    lt = LT_ETHERNET
    pkts = tcp_session(lt, '192.0.2.70', '198.51.100.70', 49001, 8000, t=100_000)
    pkts += udp_exchange(lt, '2001:db8:70::a', '2001:db8:70::b', 49002, 53, ipv6=True, t=300_000)
    return pkts


def golden_nanosecond():
    pkts = udp_exchange(LT_ETHERNET, '192.0.2.80', '198.51.100.80', 50001, 123, t=100_000)
    pkts += tcp_session(LT_ETHERNET, '192.0.2.80', '198.51.100.81', 50002, 8000, t=200_000)
    return pkts


def golden_big_endian():
    pkts = udp_exchange(LT_ETHERNET, '192.0.2.90', '198.51.100.90', 51001, 53, t=100_000)
    pkts += tcp_session(LT_ETHERNET, '192.0.2.90', '198.51.100.91', 51002, 8000, t=200_000)
    return pkts


def golden_fcs():
    """Frames that still carry their FCS; the pcap LinkType word says so (0x24000001)."""
    pkts = udp_exchange(LT_ETHERNET, '192.0.2.130', '198.51.100.130', 55001, 53, t=100_000)
    pkts += tcp_session(LT_ETHERNET, '192.0.2.130', '198.51.100.131', 55002, 8000, t=200_000)
    return [(t, ethernet_fcs(data)) for t, data in pkts]


def golden_non_ip():
    """ARP and an 802.3/LLC spanning-tree frame around one UDP exchange: only the UDP becomes a flow."""
    arp_req = Ether(src=MAC_A, dst='ff:ff:ff:ff:ff:ff') / ARP(op=1, hwsrc=MAC_A, psrc='192.0.2.140',
                                                             pdst='192.0.2.1')
    arp_rep = Ether(src=MAC_B, dst=MAC_A) / ARP(op=2, hwsrc=MAC_B, psrc='192.0.2.1', hwdst=MAC_A,
                                                pdst='192.0.2.140')
    bpdu = Dot3(src=MAC_B, dst='01:80:c2:00:00:00') / LLC(dsap=0x42, ssap=0x42, ctrl=3) / STP()
    pkts = [(100_000, bytes(arp_req)), (100_200, bytes(arp_rep)), (150_000, bytes(bpdu))]
    pkts += udp_exchange(LT_ETHERNET, '192.0.2.140', '198.51.100.140', 56001, 53, t=200_000)
    return pkts


def golden_mpls():
    """Ethernet / MPLS label stack (two entries, S on the second; RFC 3032) / IPv4 and IPv6; one stack of
    three entries under an 802.1Q tag."""
    def mpls(ip_pkt, outbound=False, labels=(100, 200), vlan=None):
        src, dst = (MAC_A, MAC_B) if not outbound else (MAC_B, MAC_A)
        stack = None
        for i, lab in enumerate(labels):
            entry = MPLS(label=lab, s=1 if i == len(labels) - 1 else 0, ttl=64)
            stack = entry if stack is None else stack / entry
        head = Ether(src=src, dst=dst) / Dot1Q(vlan=vlan) if vlan is not None else Ether(src=src, dst=dst)
        return bytes(head / stack / ip_pkt)
    out = [(100_000, mpls(udp('192.0.2.170', '198.51.100.170', 58001, 53, b'q' * 20))),
           (101_500, mpls(udp('198.51.100.170', '192.0.2.170', 53, 58001, b'a' * 40), outbound=True)),
           (200_000, mpls(udp('2001:db8:170::a', '2001:db8:170::b', 58002, 53, b'q' * 24, ipv6=True))),
           (300_000, mpls(udp('192.0.2.171', '198.51.100.171', 58003, 123, b'n' * 48), labels=(16, 17, 18), vlan=170))]
    out += [(t + 300_000, mpls(IP(data))) for t, data in tcp_session(LT_RAW, '192.0.2.172', '198.51.100.172', 58004, 443)]
    return out


def golden_pppoe():
    """Ethernet / PPPoE session (RFC 2516, EtherType 0x8864) / PPP / IPv4 and IPv6."""
    def pppoe(ip_pkt, outbound=False):
        src, dst = (MAC_A, MAC_B) if not outbound else (MAC_B, MAC_A)
        proto = 0x57 if isinstance(ip_pkt, IPv6) else 0x21
        return bytes(Ether(src=src, dst=dst, type=0x8864) / PPPoE(sessionid=0x0180) / PPP(proto=proto) / ip_pkt)
    return [(100_000, pppoe(udp('192.0.2.180', '198.51.100.180', 59001, 53, b'q' * 20))),
            (101_000, pppoe(udp('198.51.100.180', '192.0.2.180', 53, 59001, b'a' * 60), outbound=True)),
            (200_000, pppoe(udp('2001:db8:180::a', '2001:db8:180::b', 59002, 443, b'x' * 30, ipv6=True)))]


def golden_ppp():
    """LINKTYPE_PPP (9): frames with HDLC-like framing (FF 03) and frames that start with the protocol field."""
    pkts = udp_exchange(LT_PPP, '192.0.2.190', '198.51.100.190', 59101, 53, t=100_000)
    pkts += [(200_000, frame(LT_PPP, udp('2001:db8:190::a', '2001:db8:190::b', 59102, 53, b'q' * 16, ipv6=True)))]
    return pkts


def golden_c_hdlc():
    """LINKTYPE_C_HDLC (104): Cisco HDLC with IPv4 and IPv6 EtherTypes."""
    pkts = udp_exchange(LT_C_HDLC, '192.0.2.200', '198.51.100.200', 59201, 53, t=100_000)
    pkts += udp_exchange(LT_C_HDLC, '2001:db8:200::a', '2001:db8:200::b', 59202, 53, ipv6=True, t=200_000)
    return pkts


def golden_tunnels():
    """Mirror and overlay encapsulations, opened so the carried traffic is what counts: VXLAN (RFC 7348),
    GENEVE (RFC 8926), GRE with Ethernet (0x6558) and a key (RFC 2890), ERSPAN II and III (with the
    platform-specific subheader); GRE carrying IP stays a GRE flow between the tunnel ends."""
    outer = lambda: Ether(src=MAC_A, dst=MAC_B) / IP(src='10.20.0.1', dst='10.20.0.2', id=1)
    inner_eth = lambda: Ether(src='02:00:00:00:01:0a', dst='02:00:00:00:01:0b')
    q = udp('192.0.2.210', '198.51.100.210', 59301, 53, b'q' * 20)
    a = udp('198.51.100.210', '192.0.2.210', 53, 59301, b'a' * 50)
    out = [
        (100_000, bytes(outer() / UDP(sport=49152, dport=4789) / VXLAN(vni=4242, flags=0x08) / inner_eth() / q)),
        (100_800, bytes(outer() / UDP(sport=49153, dport=4789) / VXLAN(vni=4242, flags=0x08) / inner_eth() / Dot1Q(vlan=210) / a)),
        (200_000, bytes(outer() / UDP(sport=49154, dport=6081) / GENEVE(proto=0x6558, vni=77) / inner_eth() /
                        udp('2001:db8:210::a', '2001:db8:210::b', 59302, 443, b'x' * 40, ipv6=True))),
        (300_000, bytes(outer() / GRE(key_present=1, key=9, proto=0x6558) / inner_eth() /
                        tcp('192.0.2.211', '198.51.100.211', 59303, 22, 'S', 7000))),
        (400_000, bytes(outer() / GRE(seqnum_present=1, seqence_number=5, proto=0x88BE) / ERSPAN_II(session_id=3) /
                        inner_eth() / udp('192.0.2.212', '198.51.100.212', 59304, 123, b'n' * 48))),
        (500_000, bytes(outer() / GRE(seqnum_present=1, seqence_number=6, proto=0x22EB) / ERSPAN_III(session_id=4, o=1) /
                        ERSPAN_PlatformSpecific() / inner_eth() / udp('192.0.2.213', '198.51.100.213', 59305, 514, b's' * 30))),
        (600_000, bytes(outer() / GRE(proto=0x0800) / udp('192.0.2.214', '198.51.100.214', 59306, 53, b'g' * 10))),
    ]
    return out


def golden_ipv4_options():
    """IPv4 headers longer than 20 octets (IHL 6 and 10): ports sit after the options."""
    a, b = '192.0.2.150', '198.51.100.150'
    with_nops = IP(src=a, dst=b, id=150, options=[IPOption_NOP()] * 4) / UDP(sport=57001, dport=53) / Raw(b'q' * 10)
    with_rr = IP(src=b, dst=a, id=151, options=[IPOption_RR(routers=['0.0.0.0'] * 4)]) / UDP(sport=53, dport=57001) / Raw(b'a' * 30)
    return [(100_000, frame(LT_ETHERNET, with_nops)), (100_500, frame(LT_ETHERNET, with_rr, outbound=True))]


# --------------------------------------------------------------------------------------------
# Part 2: writing files
# --------------------------------------------------------------------------------------------

def write_pcap(path, linktype, pkts, endian='<', nano=False, snaplen=65535):
    """pkts: (offset in µs from T0, frame). For nanosecond files the sub-second field gets an
    extra 789 ns so that a reader dividing by 10^6 instead of 10^9 is caught."""
    w = RawPcapWriter(path, linktype=linktype, endianness=endian, nano=nano, snaplen=snaplen)
    w.write_header(None)
    for off_us, data in pkts:
        sec, frac = T0 + off_us // 1_000_000, off_us % 1_000_000
        if nano:
            frac = frac * 1000 + 789
        cap = data[:snaplen]
        w.write_packet(cap, sec=sec, usec=frac, caplen=len(cap), wirelen=len(data))
    w.close()


def pcapng_block(block_type, body, order='<'):
    """METHODS.md 1.2: type, total length, body padded to 32 bits, total length again."""
    body += b'\x00' * (-len(body) % 4)
    total = 12 + len(body)
    return struct.pack(order + 'II', block_type, total) + body + struct.pack(order + 'I', total)


def pcapng_option(code, value, order='<'):
    return struct.pack(order + 'HH', code, len(value)) + value + b'\x00' * (-len(value) % 4)


def pcapng_shb(order='<'):
    return pcapng_block(0x0A0D0D0A, struct.pack(order + 'IHHq', 0x1A2B3C4D, 1, 0, -1)
                        + pcapng_option(4, b'tidewatch make_capture_goldens.py', order)
                        + pcapng_option(0, b'', order), order)


def pcapng_idb(linktype, snaplen, options, order='<'):
    body = struct.pack(order + 'HHI', linktype, 0, snaplen)
    body += b''.join(pcapng_option(code, value, order) for code, value in options)
    return pcapng_block(1, body + pcapng_option(0, b'', order), order)


def pcapng_epb(iface, ticks, data, order='<'):
    body = struct.pack(order + 'IIIII', iface, ticks >> 32, ticks & 0xFFFFFFFF, len(data), len(data)) + data
    return pcapng_block(6, body, order)


def write_pcapng_two_interfaces(path):
    """SHB; IDB 0 = Ethernet, if_tsresol 6 (µs); IDB 1 = raw IP, if_tsresol 9 (ns), snaplen 0 (no limit);
    EPBs interleaved from both interfaces. Returns nothing; the expectation reads the file back."""
    out = [pcapng_shb(),
           pcapng_idb(LT_ETHERNET, 65535, [(2, b'eth0'), (9, b'\x06')]),
           pcapng_idb(LT_RAW, 0, [(2, b'tun0'), (9, b'\x09')])]
    eth = udp_exchange(LT_ETHERNET, '192.0.2.100', '198.51.100.100', 52001, 53, t=100_000)
    eth += tcp_session(LT_ETHERNET, '192.0.2.100', '198.51.100.101', 52002, 8000, t=150_000)
    raw = udp_exchange(LT_RAW, '10.99.0.1', '10.99.0.2', 52003, 4789, t=120_000)
    raw += udp_exchange(LT_RAW, '2001:db8:99::1', '2001:db8:99::2', 52004, 53, ipv6=True, t=170_000)
    tagged = [(t, 0, d) for t, d in eth] + [(t, 1, d) for t, d in raw]
    tagged.sort(key=lambda x: (x[0], x[1]))
    for off_us, iface, data in tagged:
        if iface == 0:
            ticks = (T0 * 1_000_000) + off_us
        else:
            ticks = (T0 * 1_000_000 + off_us) * 1000 + 321  # sub-µs part only the ns interface can carry
        out.append(pcapng_epb(iface, ticks, data))
    with open(path, 'wb') as f:
        f.write(b''.join(out))


DOC_PEN = 32473  # the Private Enterprise Number reserved for documentation (RFC 5612)


def write_pcapng_sections(path):
    """Two sections. Section 1, little-endian: IDB 0 Ethernet without if_tsresol (so µs), a Name
    Resolution Block, EPBs, an Interface Statistics Block and a Custom Block, all but the EPBs to be
    skipped. Section 2, big-endian: its own IDB 0 (interface ids restart per section), Ethernet,
    if_tsresol 0x8A (2^-10 s ticks) and if_tsoffset 1700000000 s. One UDP flow has its request in
    section 1 and its answer in section 2, so the flow table must not reset between sections."""
    s1 = udp_exchange(LT_ETHERNET, '192.0.2.110', '198.51.100.110', 53001, 53, t=100_000)
    across = udp_exchange(LT_ETHERNET, '192.0.2.110', '198.51.100.111', 53002, 53, t=200_000)
    nrb_value = bytes([198, 51, 100, 110]) + b'ns.example\x00'  # nrb_record_ipv4: address, NUL-ended name
    nrb = struct.pack('<HH', 1, len(nrb_value)) + nrb_value + b'\x00' * (-len(nrb_value) % 4)
    nrb += struct.pack('<HH', 0, 0)  # nrb_record_end
    out = [pcapng_shb(), pcapng_idb(LT_ETHERNET, 65535, [(2, b'eth0')]), pcapng_block(4, nrb)]
    for off_us, data in s1 + across[:1]:
        out.append(pcapng_epb(0, T0 * 1_000_000 + off_us, data))
    isb = struct.pack('<III', 0, 0, 0) + pcapng_option(4, struct.pack('<Q', 3)) + pcapng_option(0, b'')
    out += [pcapng_block(5, isb), pcapng_block(0x00000BAD, struct.pack('<I', DOC_PEN) + b'skip me')]

    order, offset = '>', 1700000000
    out += [pcapng_shb(order),
            pcapng_idb(LT_ETHERNET, 65535, [(2, b'eth1'), (9, b'\x8a'),
                                            (14, struct.pack('>q', offset))], order)]
    s2 = [(250_000 + across[1][0] - across[0][0], across[1][1])]  # the answer, about 251 ms in
    s2 += tcp_session(LT_ETHERNET, '192.0.2.110', '198.51.100.112', 53003, 8000, t=300_000)
    for off_us, data in s2:
        ticks = ((T0 - offset) * 1_000_000 + off_us) * 1024 // 1_000_000  # 1/1024 s, rounded down
        out.append(pcapng_epb(0, ticks, data, order))
    with open(path, 'wb') as f:
        f.write(b''.join(out))


def ethernet_fcs(data):
    """Append the 4-octet Ethernet FCS (CRC-32, sent least significant octet first)."""
    return data + struct.pack('<I', zlib.crc32(data))


def write_pcap_truncated_tail(path):
    """A capture whose last record is cut: its header promises the 51-octet frame, the file holds 20.
    Returns the complete records (read back with dpkt before cutting) as the reference input."""
    pkts = udp_exchange(LT_ETHERNET, '192.0.2.120', '198.51.100.120', 54001, 53, t=100_000)
    pkts += [(200_000, frame(LT_ETHERNET, udp('192.0.2.120', '203.0.113.120', 54002, 514, b'cut short')))]
    write_pcap(path, LT_ETHERNET, pkts)
    complete = list(read_pcap(path))[:-1]
    with open(path, 'r+b') as f:
        f.truncate(os.path.getsize(path) - (len(pkts[-1][1]) - 20))
    return complete


# --------------------------------------------------------------------------------------------
# Part 3: reading back (dpkt) -> (timestamp as Decimal seconds, linktype, frame bytes)
# --------------------------------------------------------------------------------------------

def read_pcap(path):
    with open(path, 'rb') as f:
        r = dpkt.pcap.Reader(f)
        lt = r.datalink()
        for ts, buf in r:
            # dpkt yields a float for µs files and a Decimal for ns files; repr() of the float is the
            # shortest decimal that round-trips, i.e. exactly the written sec.usec.
            yield (ts if isinstance(ts, Decimal) else Decimal(repr(ts))), lt, buf


def read_pcapng(path):
    """Own walk of the blocks, because dpkt.pcapng.Reader applies the first interface's link type and
    if_tsresol to every packet and reads one section only. Uses dpkt's block classes (LE and BE) for
    the field layout; follows METHODS.md 1.2: the byte order is read from each SHB's magic, interface
    ids restart in every section, time = if_tsoffset + ticks / resolution, other blocks are skipped."""
    with open(path, 'rb') as f:
        data = f.read()
    ng = dpkt.pcapng
    le, interfaces = True, []  # interfaces: (linktype, ticks per second, offset in seconds)
    pos = 0
    while pos + 12 <= len(data):
        if data[pos:pos + 4] == b'\x0a\x0d\x0d\x0a':
            le, interfaces = data[pos + 8:pos + 12] == b'\x4d\x3c\x2b\x1a', []
        btype, blen = struct.unpack_from('<II' if le else '>II', data, pos)
        block = data[pos:pos + blen]
        if btype == ng.PCAPNG_BT_IDB:
            idb = (ng.InterfaceDescriptionBlockLE if le else ng.InterfaceDescriptionBlock)(block)
            per_second, offset = 10 ** 6, 0
            for opt in idb.opts:
                if opt.code == ng.PCAPNG_OPT_IF_TSRESOL:
                    v = opt.data[0]
                    per_second = 2 ** (v & 0x7F) if v & 0x80 else 10 ** v
                elif opt.code == ng.PCAPNG_OPT_IF_TSOFFSET:
                    offset = struct.unpack('<q' if le else '>q', opt.data)[0]
            interfaces.append((idb.linktype, per_second, offset))
        elif btype == ng.PCAPNG_BT_EPB:
            epb = (ng.EnhancedPacketBlockLE if le else ng.EnhancedPacketBlock)(block)
            linktype, per_second, offset = interfaces[epb.iface_id]
            ticks = (epb.ts_high << 32) | epb.ts_low
            yield offset + Decimal(ticks) / Decimal(per_second), linktype, epb.pkt_data
        pos += blen


def open_tunnel(ip, depth=0):
    """The frame inside a mirror or overlay tunnel, as (ip, vlan) of that frame read with dpkt, or None to
    keep the packet as it is. Tunnel headers are read here from their specifications (VXLAN RFC 7348
    section 5, GENEVE RFC 8926 section 3.4, GRE RFC 2784 / RFC 2890, ERSPAN II and III from the published
    drafts); dpkt dissects what they carry."""
    if depth == 2 or not isinstance(ip, dpkt.ip.IP) or ip.off & 0x3FFF:
        return None
    payload = bytes(ip)[ip.hl * 4:ip.len]
    if ip.p == 17 and len(payload) >= 16:
        dport = struct.unpack('>H', payload[2:4])[0]
        body = payload[8:]
        if dport == 4789 and body[0] & 0x08:
            return link_ip(LT_ETHERNET, body[8:], depth + 1)
        if dport == 6081 and body[0] >> 6 == 0:
            proto, at = struct.unpack('>H', body[2:4])[0], 8 + (body[0] & 0x3F) * 4
            if proto == 0x6558:
                return link_ip(LT_ETHERNET, body[at:], depth + 1)
        return None
    if ip.p == 47 and len(payload) >= 4:
        flags, proto = struct.unpack('>HH', payload[:4])
        if flags & 0x4007:
            return None
        at = 4 + (4 if flags & 0x8000 else 0) + (4 if flags & 0x2000 else 0) + (4 if flags & 0x1000 else 0)
        if proto == 0x6558:
            return link_ip(LT_ETHERNET, payload[at:], depth + 1)
        if proto == 0x88BE:
            return link_ip(LT_ETHERNET, payload[at + (8 if flags & 0x1000 else 0):], depth + 1)
        if proto == 0x22EB:
            sub = 8 if payload[at + 11] & 1 else 0
            return link_ip(LT_ETHERNET, payload[at + 12 + sub:], depth + 1)
    return None


def link_ip(linktype, buf, depth=0):
    ip, vlan = ip_layer(linktype, buf)
    inner = open_tunnel(ip, depth)
    return inner if inner is not None else (ip, vlan)


def ip_layer(linktype, buf):
    """Link layer via dpkt. Returns (dpkt IP or IP6 or, for ARP, LLC and the like, None; outermost VID
    or None). An FCS left on the frame needs no trimming: the IP length fields bound the datagram."""
    linktype &= 0xFFFF  # the upper bits of the pcap LinkType word carry the FCS length (METHODS.md 1.1)
    if linktype == LT_ETHERNET:
        eth = dpkt.ethernet.Ethernet(buf)
        tags = getattr(eth, 'vlan_tags', None)
        inner = eth.data
        if isinstance(inner, dpkt.pppoe.PPPoE):  # dpkt dissects PPPoE session frames down to PPP
            inner = inner.data.data
        # MPLS: dpkt pops the label stack (eth.mpls_labels) and dissects IP by the version nibble
        ip = inner if isinstance(inner, (dpkt.ip.IP, dpkt.ip6.IP6)) else None
        return ip, (tags[0].id if tags else None)
    if linktype == LT_RAW:
        return (dpkt.ip.IP(buf) if buf[0] >> 4 == 4 else dpkt.ip6.IP6(buf)), None
    if linktype == LT_SLL:
        return dpkt.sll.SLL(buf).data, None
    if linktype == LT_SLL2:
        return dpkt.sll2.SLL2(buf).data, None
    if linktype in (LT_NULL, LT_LOOP):
        return dpkt.loopback.Loopback(buf).data, None  # dpkt accepts the family in either byte order
    if linktype == LT_PPP:
        # FF 03 framing: dpkt's PPP; a bare protocol field: dpkt's header-less PPP (the PPPoE one)
        return (dpkt.ppp.PPP(buf) if buf[:2] == b'\xff\x03' else dpkt.pppoe.PPP(buf)).data, None
    if linktype == LT_C_HDLC:
        # dpkt has no Cisco HDLC layer: the 4-octet header (address, control, EtherType) is read here
        et = struct.unpack('>H', buf[2:4])[0]
        return (dpkt.ip.IP(buf[4:]) if et == 0x0800 else dpkt.ip6.IP6(buf[4:])), None
    raise ValueError('link type %d' % linktype)


# --------------------------------------------------------------------------------------------
# Part 4: the reference flow table (conventions of src/flow/record.ts)
# --------------------------------------------------------------------------------------------

ICMP_ECHO_REPLY_TO_REQUEST = {(1, 0): 8, (58, 129): 128}
ICMP_UNREACHABLE = {1: 3, 58: 1}
ICMP_TIME_EXCEEDED = {1: 11, 58: 3}


def addr(packed):
    a = ipaddress.ip_address(packed)
    if a.version == 6 and a.ipv4_mapped:
        a = a.ipv4_mapped
    return a


class Flow:
    """One bidirectional flow: counters per direction (initiator first) and the TCP handshake facts
    the outcome is decided from."""

    def __init__(self, proto, src, dst, sport, dport, ts, vlan):
        self.proto, self.src, self.dst, self.sport, self.dport = proto, src, dst, sport, dport
        self.start = self.end = ts
        self.pkts = self.bytes = self.rpkts = self.rbytes = self.flags = self.rflags = 0
        self.vlan = vlan
        self.opened_with_syn = None  # TCP: was the first packet a SYN without ACK?
        self.syn_ack_back = self.completed = self.reset_back = self.icmp_rejected = self.ttl_expired = False

    def add(self, forward, ts, ip_len, tcp_flags):
        self.end = ts
        if forward:
            self.pkts += 1
            self.bytes += ip_len
            self.flags |= tcp_flags
        else:
            self.rpkts += 1
            self.rbytes += ip_len
            self.rflags |= tcp_flags
        if self.proto != 6:
            return
        if self.opened_with_syn is None:
            self.opened_with_syn = forward and tcp_flags & 0x12 == 0x02
        if not forward and tcp_flags & 0x12 == 0x12:
            self.syn_ack_back = True
        elif not forward and tcp_flags & 0x04 and not self.syn_ack_back:
            self.reset_back = True
        elif forward and self.syn_ack_back and tcp_flags & 0x10:
            self.completed = True
        elif forward and self.opened_with_syn and tcp_flags & 0x16 == 0x10:
            # an ACK acknowledges what came back (RFC 9293 section 3.5): the SYN-ACK was missed
            self.completed = True

    def outcome(self):
        """The capture path's rules (src/flow/flow-state.ts outcomeOf), in its order."""
        if self.proto in (1, 58):
            # an echo request's flow holds its replies: answered or not; other ICMP flows have none
            if self.dport >> 8 != ICMP_ECHO_REPLY_TO_REQUEST[(self.proto, 0 if self.proto == 1 else 129)]:
                return 'n/a'
        elif self.proto == 6:
            if self.opened_with_syn and self.completed:
                return 'established'
            if self.icmp_rejected:
                return 'rejected'
            if not self.opened_with_syn:
                return 'partial'
            if self.reset_back:
                return 'rejected'
            return 'partial' if self.syn_ack_back or self.rpkts or self.ttl_expired else 'unanswered'
        if self.rpkts > 0:
            return 'established'
        if self.icmp_rejected:
            return 'rejected'
        return 'partial' if self.ttl_expired else 'unanswered'

    def record(self, exporter):
        rec = {
            'start': ms(self.start), 'end': ms(self.end), 'proto': self.proto,
            'src': str(self.src), 'dst': str(self.dst), 'sport': self.sport, 'dport': self.dport,
            'pkts': self.pkts, 'bytes': self.bytes, 'rpkts': self.rpkts, 'rbytes': self.rbytes,
            'flags': self.flags, 'rflags': self.rflags, 'outcome': self.outcome(), 'exporter': exporter,
        }
        if self.vlan is not None:
            rec['vlan'] = self.vlan
        return rec


def ms(ts):
    """Epoch seconds (exact Decimal) to epoch milliseconds: the nearest double, as JSON will carry it."""
    return float(ts * 1000)


def endpoint_key(proto, a, pa, b, pb):
    """Direction-free key: the two (address, port) ends in a fixed order."""
    ends = sorted([((a.version, a.packed), pa), ((b.version, b.packed), pb)])
    return (proto,) + tuple(ends)


class FlowTable:
    def __init__(self):
        self.flows = {}
        self.fragments = {}  # (src, dst, proto, id) -> (sport, dport) of the first fragment
        self.order = []

    def packet(self, ts, ip, vlan):
        src, dst = addr(ip.src), addr(ip.dst)
        if isinstance(ip, dpkt.ip.IP):
            ip_len, proto = ip.len, ip.p
            frag_id, frag_off, more = ip.id, ip.offset, ip.mf
        else:
            ip_len, proto = ip.plen + 40, ip.p  # dpkt sets p to the header that ends the chain
            frag = next((h for h in ip.all_extension_headers
                         if isinstance(h, dpkt.ip6.IP6FragmentHeader)), None)
            frag_id, frag_off, more = (frag.id, frag.frag_off, frag.m_flag) if frag else (0, 0, 0)
        transport = ip.data
        if frag_off:  # a later fragment: no transport header, ports from its first fragment if seen
            sport, dport = self.fragments.get((src, dst, proto, frag_id), (0, 0))
            self.count(ts, proto, src, dst, sport, dport, ip_len, 0, vlan)
            return
        if proto in (6, 17):
            sport, dport = transport.sport, transport.dport
            if more:
                self.fragments[(src, dst, proto, frag_id)] = (sport, dport)
            self.count(ts, proto, src, dst, sport, dport, ip_len, transport.flags if proto == 6 else 0, vlan)
        elif proto in (1, 58):
            self.icmp(ts, proto, src, dst, transport, ip_len, vlan)
        else:
            self.count(ts, proto, src, dst, 0, 0, ip_len, 0, vlan)

    def icmp(self, ts, proto, src, dst, msg, ip_len, vlan):
        """Echo replies fold into their request's flow; every other message (requests, errors) is a
        flow of its own keyed by type and code. A Destination Unreachable of any code also marks the
        flow it quotes rejected (the goldens use 3/3, 3/13, 1/4 and 1/1 only)."""
        request = ICMP_ECHO_REPLY_TO_REQUEST.get((proto, msg.type))
        if request is not None:  # a reply: count it backwards on its request's flow
            self.count(ts, proto, dst, src, 0, request * 256 + msg.code, ip_len, 0, vlan, reverse=True)
            return
        self.count(ts, proto, src, dst, 0, msg.type * 256 + msg.code, ip_len, 0, vlan)
        if msg.type in (ICMP_UNREACHABLE[proto], ICMP_TIME_EXCEEDED[proto]):
            quoted = msg.data.data  # Unreach / TimeExceed -> quoted IP / IPv6 header
            # RFC 792 guarantees only 8 octets of the quoted transport header, too few for dpkt to
            # parse TCP; the ports are its first 4 octets either way.
            sport, dport = struct.unpack('>HH', bytes(quoted.data)[:4])
            if quoted.p in (1, 58):  # a quoted ICMP message: its flow is keyed by type and code
                sport, dport = 0, struct.unpack('>H', bytes(quoted.data)[:2])[0]
            flow = self.flows.get(endpoint_key(quoted.p, addr(quoted.src), sport, addr(quoted.dst), dport))
            if flow is not None and msg.type == ICMP_UNREACHABLE[proto]:
                flow.icmp_rejected = True
            elif flow is not None:
                flow.ttl_expired = True

    def count(self, ts, proto, src, dst, sport, dport, ip_len, tcp_flags, vlan, reverse=False):
        """reverse: the packet travels dst -> src of the flow named (src, sport, dst, dport)."""
        key = endpoint_key(proto, src, sport, dst, dport)
        flow = self.flows.get(key)
        if flow is None:
            flow = Flow(proto, src, dst, sport, dport, ts, vlan)
            self.flows[key] = flow
            self.order.append(flow)
        if proto in (1, 58):
            forward = (src == flow.src) != reverse
        else:
            forward = (src, sport) == (flow.src, flow.sport)
        flow.add(forward, ts, ip_len, tcp_flags)


def expected_flows(packets, exporter):
    table = FlowTable()
    for ts, linktype, buf in packets:
        ip, vlan = link_ip(linktype, buf)
        if ip is not None:
            table.packet(ts, ip, vlan)
    recs = [f.record(exporter) for f in table.order]
    recs.sort(key=lambda r: (r['start'], r['proto'], r['src'], r['dst'], r['sport'], r['dport']))
    return recs


# --------------------------------------------------------------------------------------------
# Part 5: the goldens
# --------------------------------------------------------------------------------------------

# name, file format note, what it covers, writer
GOLDENS = [
    ('ethernet.pcap', 'pcap LE µs, linktype 1',
     'Ethernet II; IPv4 and IPv6 UDP exchanges; ICMP and ICMPv6 echo with the reply folded in; '
     'one-way UDP',
     lambda p: write_pcap(p, LT_ETHERNET, golden_ethernet())),
    ('raw-ip.pcap', 'pcap LE µs, linktype 101',
     'raw IP, version picked from the first nibble (IPv4 and IPv6)',
     lambda p: write_pcap(p, LT_RAW, golden_link(LT_RAW))),
    ('linux-sll.pcap', 'pcap LE µs, linktype 113',
     'Linux cooked v1, EtherType at offset 14',
     lambda p: write_pcap(p, LT_SLL, golden_link(LT_SLL))),
    ('linux-sll2.pcap', 'pcap LE µs, linktype 276',
     'Linux cooked v2, EtherType at offset 0',
     lambda p: write_pcap(p, LT_SLL2, golden_link(LT_SLL2))),
    ('bsd-null.pcap', 'pcap LE µs, linktype 0',
     'BSD loopback, family in little-endian host order; IPv6 as family 24, 28 and 30',
     lambda p: write_pcap(p, LT_NULL, golden_null())),
    ('bsd-loop.pcap', 'pcap LE µs, linktype 108',
     'OpenBSD loopback, family big-endian (IPv6 = 24)',
     lambda p: write_pcap(p, LT_LOOP, golden_link(LT_LOOP, af6=24))),
    ('vlan-8021q.pcap', 'pcap LE µs, linktype 1',
     'one 802.1Q tag (TPID 0x8100, VID 100) on UDP, a refused TCP SYN and IPv6',
     lambda p: write_pcap(p, LT_ETHERNET, golden_vlan([(0x8100, 100)]))),
    ('vlan-qinq.pcap', 'pcap LE µs, linktype 1',
     'QinQ: S-tag 0x88A8 VID 200 outside, C-tag 0x8100 VID 300 inside; vlan = outermost = 200',
     lambda p: write_pcap(p, LT_ETHERNET, golden_vlan([(0x88A8, 200), (0x8100, 300)]))),
    ('ipv4-fragments.pcap', 'pcap LE µs, linktype 1',
     'a UDP datagram in 3 IPv4 fragments (one flow, 3 packets) and its answer; a later fragment whose '
     'first is missing (counted to the host pair with ports 0)',
     lambda p: write_pcap(p, LT_ETHERNET, golden_ipv4_fragments())),
    ('ipv6-ext-headers.pcap', 'pcap LE µs, linktype 1',
     'IPv6 UDP behind hop-by-hop, destination options, routing and an atomic fragment header; a TCP '
     'handshake with a hop-by-hop and a destination options header',
     lambda p: write_pcap(p, LT_ETHERNET, golden_ipv6_ext_headers())),
    ('ipv6-fragments.pcap', 'pcap LE µs, linktype 1',
     'a UDP datagram in 2 IPv6 fragments (fragment header right after the fixed header) and its answer',
     lambda p: write_pcap(p, LT_ETHERNET, golden_ipv6_fragments())),
    ('icmp-unreachable.pcap', 'pcap LE µs, linktype 1',
     'UDP probe answered by ICMP port unreachable (3/3): the probe flow is rejected, the ICMP error is its '
     'own flow with dport 771; a TCP SYN answered by a router with 3/13: rejected, error flow dport 781',
     lambda p: write_pcap(p, LT_ETHERNET, golden_icmp_unreachable())),
    ('icmp6-unreachable.pcap', 'pcap LE µs, linktype 1',
     'UDP probe answered by ICMPv6 port unreachable (1/4): probe rejected, error flow dport 260; a TCP '
     'SYN answered by a router with 1/1: rejected, error flow dport 257',
     lambda p: write_pcap(p, LT_ETHERNET, golden_icmp6_unreachable())),
    ('icmp-time-exceeded.pcap', 'pcap LE µs, linktype 1',
     'traceroute probes answered by routers with ICMP time exceeded (11/0) and ICMPv6 time exceeded (3/0): '
     'UDP, TCP and ICMP echo probes partial, error flows dport 2816 and 768',
     lambda p: write_pcap(p, LT_ETHERNET, golden_icmp_time_exceeded())),
    ('one-way-tcp.pcap', 'pcap LE µs, linktype 1',
     'one direction of a tap: SYN, ACK, data, FIN from a client, nothing back (established, the ACK implies '
     'the SYN-ACK); a SYN alone (unanswered)',
     lambda p: write_pcap(p, LT_ETHERNET, golden_one_way_tcp())),
    ('ipv6-addresses.pcap', 'pcap LE µs, linktype 1',
     'RFC 5952 text forms (2001:db8::1:0:0:1, 2001:db8:0:1::1, no single-field ::, lower case) and '
     'IPv4-mapped IPv6 carried as IPv4',
     lambda p: write_pcap(p, LT_ETHERNET, golden_ipv6_addresses())),
    ('tcp-refused.pcap', 'pcap LE µs, linktype 1',
     'SYN answered by RST-ACK: rejected',
     lambda p: write_pcap(p, LT_ETHERNET, golden_tcp_refused())),
    ('tcp-outcomes.pcap', 'pcap LE µs, linktype 1',
     'SYN retransmitted with no answer (unanswered); SYN and SYN-ACK only (partial); first packet not a '
     'SYN (partial)',
     lambda p: write_pcap(p, LT_ETHERNET, golden_tcp_outcomes())),
    ('tcp-session.pcap', 'pcap LE µs, linktype 1',
     'full handshake, data both ways, FIN teardown: established, flags 0x1B both ways',
     lambda p: write_pcap(p, LT_ETHERNET, golden_tcp_session())),
    ('snaplen-64.pcap', 'pcap LE µs, linktype 1, snaplen 64',
     'frames cut to 64 captured octets; bytes still from the IP length fields',
     lambda p: write_pcap(p, LT_ETHERNET, golden_snaplen(), snaplen=64)),
    ('nanosecond.pcap', 'pcap LE ns (magic A1B23C4D), linktype 1',
     'nanosecond timestamps (each has +789 ns)',
     lambda p: write_pcap(p, LT_ETHERNET, golden_nanosecond(), nano=True)),
    ('big-endian.pcap', 'pcap BE µs (on disk A1 B2 C3 D4), linktype 1',
     'file and record headers big-endian',
     lambda p: write_pcap(p, LT_ETHERNET, golden_big_endian(), endian='>')),
    ('pcapng-two-interfaces.pcapng', 'pcapng LE, IDB 0 Ethernet tsresol 6, IDB 1 raw IP tsresol 9 snaplen 0',
     'two interfaces with different link types and timestamp resolutions, EPBs interleaved',
     write_pcapng_two_interfaces),
    ('pcapng-sections.pcapng', 'pcapng: LE section (µs), then BE section (tsresol 0x8A, tsoffset)',
     'two sections of different byte order, interface ids restarting, binary resolution, if_tsoffset, '
     'NRB/ISB/custom blocks skipped, one UDP flow spanning both sections',
     write_pcapng_sections),
    ('ethernet-fcs.pcap', 'pcap LE µs, LinkType word 0x24000001 (Ethernet, FCS 4 octets)',
     'frames with a trailing FCS; the link type must be masked to its low 16 bits',
     lambda p: write_pcap(p, 0x24000001, golden_fcs())),
    ('non-ip-frames.pcap', 'pcap LE µs, linktype 1',
     'ARP request and reply and an 802.3/LLC spanning-tree frame give no flow; one UDP exchange does',
     lambda p: write_pcap(p, LT_ETHERNET, golden_non_ip())),
    ('mpls.pcap', 'pcap LE µs, linktype 1',
     'MPLS label stacks (RFC 3032: two entries; three under an 802.1Q tag) over IPv4 and IPv6, a TCP '
     'session among them; the payload told by its version nibble',
     lambda p: write_pcap(p, LT_ETHERNET, golden_mpls())),
    ('pppoe.pcap', 'pcap LE µs, linktype 1',
     'PPPoE session frames (EtherType 0x8864, RFC 2516) carrying PPP with IPv4 and IPv6',
     lambda p: write_pcap(p, LT_ETHERNET, golden_pppoe())),
    ('ppp.pcap', 'pcap LE µs, linktype 9',
     'PPP with HDLC-like framing (FF 03, RFC 1662) and without it (protocol field first)',
     lambda p: write_pcap(p, LT_PPP, golden_ppp())),
    ('cisco-hdlc.pcap', 'pcap LE µs, linktype 104',
     'Cisco HDLC: address 0F, control 00, EtherType; IPv4 and IPv6',
     lambda p: write_pcap(p, LT_C_HDLC, golden_c_hdlc())),
    ('tunnels.pcap', 'pcap LE µs, linktype 1',
     'VXLAN (with an inner 802.1Q tag), GENEVE, GRE with Ethernet and a key, ERSPAN II and III: the carried '
     'packets are the flows; GRE carrying IP stays a GRE flow between the tunnel ends',
     lambda p: write_pcap(p, LT_ETHERNET, golden_tunnels())),
    ('ipv4-options.pcap', 'pcap LE µs, linktype 1',
     'IPv4 with options (IHL 6 and IHL 10): ports read after the options, bytes = total length',
     lambda p: write_pcap(p, LT_ETHERNET, golden_ipv4_options())),
    ('truncated-tail.pcap', 'pcap LE µs, linktype 1, last record cut',
     'the file ends 20 octets into a 51-octet record: the complete records give their flows, the cut '
     'one none',
     write_pcap_truncated_tail),
]


def scapy_totals(path):
    """Second opinion on the dissection: packets and IP-layer octets as scapy reads the same file.
    Only for pcap files (scapy leaves a mixed-link-type pcapng undissected)."""
    pkts = octets = 0
    with open(path, 'rb') as f:
        header = f.read(24)
    linktype = struct.unpack('<I' if header[:4] in (b'\xd4\xc3\xb2\xa1', b'\x4d\x3c\xb2\xa1') else '>I',
                             header[20:24])[0] & 0xFFFF
    for p in rdpcap(path):
        if linktype == LT_ETHERNET and not isinstance(p, Ether):
            p = Ether(bytes(p))  # scapy does not mask the FCS bits of the LinkType word
        if linktype == LT_C_HDLC:
            raw = bytes(p)
            p = (IP if raw[2:4] == b'\x08\x00' else IPv6)(raw[4:])
        if linktype in (LT_NULL, LT_LOOP):
            # scapy binds IPv6 only to this machine's AF_INET6 (10 on Linux) and reads LOOP (108) as
            # raw bytes, so take the family from the first 4 octets here and let scapy parse the rest.
            raw = bytes(p)
            family = struct.unpack('<I' if linktype == LT_NULL else '>I', raw[:4])[0]
            p = (IP if family == AF_INET else IPv6)(raw[4:])
        # the innermost IP header, unless GRE carries IP (that tunnel stays the flow)
        ips = [x for x in p.iterpayloads() if type(x) in (IP, IPv6)]
        if not ips:
            continue
        top = ips[0] if GRE in p and p[GRE].proto in (0x0800, 0x86DD) else ips[-1]
        octets += top.len if isinstance(top, IP) else top.plen + 40
        pkts += 1
    return pkts, octets


def main():
    here = os.path.dirname(os.path.abspath(__file__))
    ap = argparse.ArgumentParser(description=__doc__.split('\n')[0])
    ap.add_argument('--out', default=os.path.join(here, 'captures'))
    args = ap.parse_args()
    os.makedirs(args.out, exist_ok=True)
    for name, fmt, covers, write in GOLDENS:
        path = os.path.join(args.out, name)
        reference = write(path)  # None, or the records to expect when the file itself is damaged
        if reference is not None:
            packets = reference
        else:
            packets = list(read_pcapng(path) if name.endswith('.pcapng') else read_pcap(path))
        flows = expected_flows(packets, exporter=name)
        if name.endswith('.pcap') and reference is None:
            ours = (sum(f['pkts'] + f['rpkts'] for f in flows), sum(f['bytes'] + f['rbytes'] for f in flows))
            assert ours == scapy_totals(path), (name, ours, scapy_totals(path))
        elif name == 'pcapng-two-interfaces.pcapng':
            # scapy's pcapng reader handles one section without if_tsoffset: there our block walk
            # must see the same timestamps and frames as scapy.
            assert [(ts, buf) for ts, _, buf in packets] == \
                [(Decimal(p.time), bytes(p)) for p in PcapNgReader(path)], name
        elif name.endswith('.pcapng'):
            # scapy ignores if_tsoffset and keeps interface ids across sections; compare the frames only.
            assert [buf for _, _, buf in packets] == [bytes(p) for p in PcapNgReader(path)], name
        head = {
            'capture': name,
            'format': fmt,
            'covers': covers,
            'expected_by': 'dpkt (read back and dissected) + flow table in test/golden/make_capture_goldens.py',
            'count': len(flows),
        }
        # One flow per line, so a diff of a regenerated golden shows which flow changed.
        lines = ['{'] + ['  %s: %s,' % (json.dumps(k), json.dumps(v, ensure_ascii=False)) for k, v in head.items()]
        lines.append('  "flows": [')
        lines += ['    %s%s' % (json.dumps(f), ',' if i + 1 < len(flows) else '') for i, f in enumerate(flows)]
        lines += ['  ]', '}']
        with open(path.rsplit('.', 1)[0] + '.flows.json', 'w', encoding='utf-8') as f:
            f.write('\n'.join(lines) + '\n')
        print('%-30s %2d flows' % (name, len(flows)))


if __name__ == '__main__':
    main()
