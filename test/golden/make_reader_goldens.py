#!/usr/bin/python3
"""Writes the small capture files the capture reader's differential and golden tests read.

Writers: scapy (pcap both byte orders, micro- and nanosecond; pcapng both byte orders), dpkt (pcapng with
if_tsresol = 9) and tcpdump/libpcap (rewrites of scapy files). For each capture it also writes
NAME.expect.json: what scapy's raw readers (RawPcapReader, RawPcapNgReader) see, with exact integer
arithmetic for the timestamps: [sec, ns, caplen, wirelen, linktype, sha1 of the captured bytes].

Run with Debian's python3 from the repository root:  /usr/bin/python3 test/golden/make_reader_goldens.py
Addresses are documentation ranges (RFC 5737, RFC 3849). Deterministic: same bytes on every run.
"""
import hashlib
import json
import os
import struct
import subprocess
from decimal import Decimal

import dpkt
from scapy.all import ICMP, IP, TCP, UDP, Ether, IPv6, Raw, Dot1Q, CookedLinux
from scapy.utils import PcapNgWriter, PcapWriter, RawPcapNgReader, RawPcapReader

OUT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "reader")
BASE = Decimal(1700000000)
# Locally administered MACs, fixed so scapy never looks up a route.
MAC_A = "02:00:00:00:00:05"
MAC_B = "02:00:00:00:00:06"


def packets():
    """About 30 varied frames: TCP handshake pieces, UDP, ICMP, IPv6, a VLAN tag, one large frame."""
    out = []
    for i in range(10):
        out.append(Ether(src="02:00:00:00:00:01", dst="02:00:00:00:00:02") /
                   IP(src="192.0.2.10", dst="198.51.100.%d" % (20 + i), id=i) /
                   TCP(sport=40000 + i, dport=443, flags="S", seq=1000 * i))
    for i in range(8):
        out.append(Ether(src="02:00:00:00:00:03", dst="02:00:00:00:00:04") /
                   IP(src="203.0.113.5", dst="192.0.2.53", id=100 + i) /
                   UDP(sport=5300 + i, dport=53) / Raw(bytes(range(i * 7 % 200, i * 7 % 200 + 20 + i))))
    for i in range(4):
        out.append(Ether(src=MAC_A, dst=MAC_B) / IP(src="198.51.100.1", dst="192.0.2.10", id=200 + i) / ICMP(type=3, code=3) /
                   IP(src="192.0.2.10", dst="198.51.100.1") / UDP(sport=1234, dport=9999))
    for i in range(4):
        out.append(Ether(src=MAC_A, dst=MAC_B, type=0x86DD) / IPv6(src="2001:db8::1", dst="2001:db8::%x" % (i + 2)) /
                   UDP(sport=6000, dport=7000 + i) / Raw(b"v6" * (i + 1)))
    out.append(Ether(src=MAC_A, dst=MAC_B) / Dot1Q(vlan=60) / IP(src="192.0.2.1", dst="192.0.2.2") / TCP(flags="SA"))
    out.append(Ether(src=MAC_A, dst=MAC_B) / IP(src="192.0.2.7", dst="203.0.113.9") / UDP(sport=1, dport=2) / Raw(bytes(1400)))
    return out


def stamp(pkts, step_ns):
    """Gives packets deterministic times with sub-microsecond digits (ns writers keep them)."""
    for i, p in enumerate(pkts):
        p.time = BASE + Decimal(i * step_ns) / Decimal(10 ** 9)
    return pkts


def write_pcap(name, endianness, nano, pkts, linktype=None, snaplen=65535):
    path = os.path.join(OUT, name)
    w = PcapWriter(path, linktype=linktype, endianness=endianness, nano=nano, snaplen=snaplen, sync=True)
    for p in pkts:
        w.write(p)
    w.close()
    return path


def write_pcapng_scapy(name, big_endian, pkts):
    path = os.path.join(OUT, name)
    w = PcapNgWriter(path)
    if big_endian:
        # scapy writes little-endian by default; both the struct order and the byte-order magic must change.
        w.endian = ">"
        w.endian_magic = b"\x1a\x2b\x3c\x4d"
    for p in pkts:
        w.write(p)
    w.close()
    return path


def write_pcapng_dpkt(name, pkts):
    """dpkt pcapng writer with a nanosecond interface (if_tsresol = 9); ticks written exactly."""
    path = os.path.join(OUT, name)
    idb = dpkt.pcapng.InterfaceDescriptionBlockLE(snaplen=65535, opts=[
        dpkt.pcapng.PcapngOptionLE(code=dpkt.pcapng.PCAPNG_OPT_IF_TSRESOL, data=b"\x09"),
        dpkt.pcapng.PcapngOptionLE(code=dpkt.pcapng.PCAPNG_OPT_ENDOFOPT),
    ])
    with open(path, "wb") as f:
        w = dpkt.pcapng.Writer(f, idb=idb)
        for p in pkts:
            ticks = int(p.time * 10 ** 9)
            raw = bytes(p)
            epb = dpkt.pcapng.EnhancedPacketBlockLE(ts_high=ticks >> 32, ts_low=ticks & 0xFFFFFFFF,
                                                    pkt_len=len(raw), pkt_data=raw)
            w.writepkt(epb)
    return path


def tcpdump_rewrite(src, name, nano):
    path = os.path.join(OUT, name)
    args = ["tcpdump", "-q", "-r", src, "-w", path]
    if nano:
        args[1:1] = ["--time-stamp-precision=nano"]
    subprocess.run(args, check=True, stderr=subprocess.DEVNULL)
    return path


def sha1(b):
    return hashlib.sha1(b).hexdigest()


def expect_pcap(path):
    r = RawPcapReader(path)
    nano = getattr(r, "nano", False)
    rows = []
    for data, meta in r:
        ns = meta.usec if nano else meta.usec * 1000
        rows.append([meta.sec, ns, meta.caplen, meta.wirelen, r.linktype, sha1(data)])
    r.close()
    return rows


def expect_pcapng(path):
    r = RawPcapNgReader(path)
    rows = []
    for data, meta in r:
        ticks = (meta.tshigh << 32) | meta.tslow
        res = int(meta.tsresol)
        rows.append([ticks // res, (ticks % res) * 10 ** 9 // res, len(data), meta.wirelen, meta.linktype, sha1(data)])
    r.close()
    return rows


def main():
    os.makedirs(OUT, exist_ok=True)
    made = []
    made.append(("pcap", write_pcap("scapy_le_us.pcap", "<", False, stamp(packets(), 250_001_000))))
    made.append(("pcap", write_pcap("scapy_be_us.pcap", ">", False, stamp(packets(), 125_000_500))))
    made.append(("pcap", write_pcap("scapy_le_ns.pcap", "<", True, stamp(packets(), 250_000_123))))
    made.append(("pcap", write_pcap("scapy_be_ns.pcap", ">", True, stamp(packets(), 1_000_000_007))))
    # Linux cooked capture (LINKTYPE_LINUX_SLL, 113) with frames cut to a 96-octet snaplen.
    sll = stamp([CookedLinux(pkttype=i % 5, proto=0x0800) / IP(src="192.0.2.10", dst="198.51.100.3") /
                 UDP(sport=5000, dport=5001) / Raw(bytes(200 + i)) for i in range(6)], 3_000_000)
    sll_path = os.path.join(OUT, "scapy_sll_snap96.pcap")
    w = PcapWriter(sll_path, linktype=113, endianness="<", snaplen=96, sync=True)
    w.write_header(None)
    for p in sll:
        raw = bytes(p)
        sec = int(p.time)
        usec = int((p.time - sec) * 1_000_000)
        w._write_packet(raw[:96], sec=sec, usec=usec, caplen=96, wirelen=len(raw))
    w.close()
    made.append(("pcap", sll_path))
    made.append(("pcap", tcpdump_rewrite(made[0][1], "tcpdump_le_us.pcap", False)))
    made.append(("pcap", tcpdump_rewrite(made[2][1], "tcpdump_ns.pcap", True)))
    made.append(("pcapng", write_pcapng_scapy("scapy_le.pcapng", False, stamp(packets(), 333_333_000))))
    made.append(("pcapng", write_pcapng_scapy("scapy_be.pcapng", True, stamp(packets(), 10_000_000))))
    made.append(("pcapng", write_pcapng_dpkt("dpkt_ns.pcapng", stamp(packets(), 123_456_789))))
    for kind, path in made:
        rows = expect_pcap(path) if kind == "pcap" else expect_pcapng(path)
        with open(path + ".expect.json", "w") as f:
            json.dump({"reader": "scapy RawPcapReader" if kind == "pcap" else "scapy RawPcapNgReader",
                       "packets": rows}, f, separators=(",", ":"))
            f.write("\n")
        print("%s: %d packets, %d bytes" % (os.path.basename(path), len(rows), os.path.getsize(path)))


if __name__ == "__main__":
    main()
