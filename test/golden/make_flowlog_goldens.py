#!/usr/bin/python3
"""Makes the flow-export goldens in test/golden/flowlog/ with scapy's NetFlow v9 and IPFIX layers.

    /usr/bin/python3 test/golden/make_flowlog_goldens.py [OUTDIR]

Writes ipfix_mixed.ipfix, netflow9_mixed.nf9 and netflow5_mixed.nf5 (messages built with
scapy.layers.netflow), exports_mixed.pcap (the same messages as UDP datagrams from three exporters,
captured, with other traffic between them: what `--input-format export-capture` reads), and for each a
.expected.json: the FlowRecords tidewatch must print, computed here by dissecting the written
bytes again with scapy (netflowv9_defragment) and mapping the dissected fields to the FlowRecord shape
(src/flow/record.ts) with the rules of docs/flow-inputs.md. Deterministic: no clocks, no randomness.

Where scapy cannot express something the bytes are built with struct, and said so beside them:
RFC 5103 reverse (enterprise 29305) fields in data records (scapy names fields by type only, so a
reverse counter collides with its forward twin) and variable-length fields (scapy reads 65535 as a
fixed length).
"""
import json
import os
import struct
import sys

from scapy.compat import raw
from scapy.layers.netflow import (
    GetNetflowRecordV9, NetflowDataflowsetV9, NetflowFlowsetV9, NetflowHeader, NetflowHeaderV9,
    NetflowHeaderV10, NetflowOptionsFlowset10, NetflowOptionsFlowsetOptionV9,
    NetflowOptionsFlowsetScopeV9, NetflowOptionsFlowsetV9, NetflowTemplateFieldV9, NetflowTemplateV9,
    netflowv9_defragment,
)
from scapy.config import conf

conf.verb = 0
NTP_UNIX = 2208988800
REV = 29305


def tmpl(tid, fields):
    """A scapy template record from [(ie, length)]."""
    return NetflowTemplateV9(templateID=tid, template_fields=[
        NetflowTemplateFieldV9(fieldType=ie, fieldLength=ln) for ie, ln in fields])


def tset(set_id, templates):
    return NetflowFlowsetV9(flowSetID=set_id, templates=[tmpl(t, f) for t, f in templates])


def record_class(template_id, fields):
    return GetNetflowRecordV9(tset(2, [(template_id, fields)]), templateID=template_id)


def ntp(ms):
    """dateTimeMicroseconds (RFC 7011 6.1.9): NTP seconds + 32-bit fraction; whole ms keep it exact."""
    sec, rem = divmod(ms, 1000)
    return struct.pack('!II', sec + NTP_UNIX, (rem << 32) // 1000)


# ---------------------------------------------------------------- the IPFIX file
T256_D1 = [(8, 4), (12, 4), (7, 2), (11, 2), (4, 1), (6, 1), (2, 8), (1, 8), (152, 8), (153, 8),
           (58, 2), (10, 4), (14, 4), (136, 1)]
T256_D2 = [(27, 16), (28, 16), (4, 1), (139, 2), (2, 4), (1, 4), (150, 4), (151, 4)]
T258 = [(8, 4), (12, 4), (7, 2), (11, 2), (4, 1), (22, 4), (21, 4), (2, 4), (1, 4)]
T256_REDEF = [(8, 4), (12, 4), (7, 2), (11, 2), (4, 1), (32, 2), (2, 4), (1, 4), (154, 8), (155, 8)]
T300 = [(8, 4), (12, 4), (7, 2), (11, 2), (4, 1), (6, 1), (2, 4), (1, 4), (152, 8), (153, 8)]
SYSINIT = 1_699_990_000_000


def ipfix(odid, seq, export, *sets):
    p = NetflowHeader(version=10) / NetflowHeaderV10(ExportTime=export, flowSequence=seq, ObservationDomainID=odid)
    for s in sets:
        p = p / s
    return fix_length(raw(p))


def fix_length(b):
    # scapy's NetflowHeaderV10 length leaves out the 2-octet version field of NetflowHeader: patch it
    return b[:2] + struct.pack('!H', len(b)) + b[4:]


def data(tid, fields, recs):
    cls = record_class(tid, fields)
    return NetflowDataflowsetV9(templateID=tid, records=[cls(**r) for r in recs])


def u(n, ln):
    return n.to_bytes(ln, 'big')


def options_template_ipfix():
    # scapy's post_build pads by cutting the packet after the scope fields; give pad explicitly
    return NetflowOptionsFlowset10(
        templateID=257, field_count=2, scope_field_count=1,
        scopes=[NetflowOptionsFlowsetScopeV9(scopeFieldType=149, scopeFieldlength=4)],
        options=[NetflowOptionsFlowsetOptionV9(optionFieldType=160, optionFieldlength=8)], pad=b'\x00\x00')


def biflow_message(odid, seq, export):
    """RFC 5103 biflow template and records, built with struct (see module comment)."""
    fields = [(8, 4, 0), (12, 4, 0), (7, 2, 0), (11, 2, 0), (4, 1, 0), (6, 1, 0), (2, 4, 0), (1, 4, 0),
              (2, 4, REV), (1, 4, REV), (6, 1, REV), (152, 8, 0), (153, 8, 0), (239, 1, 0)]
    spec = b''.join(struct.pack('!HHI', ie | 0x8000, ln, pen) if pen else struct.pack('!HH', ie, ln)
                    for ie, ln, pen in fields)
    trec = struct.pack('!HH', 259, len(fields)) + spec
    # template 260: a variable-length interfaceName (82) then the 5-tuple; RFC 7011 section 7 encoding
    t260 = struct.pack('!HH', 260, 6) + struct.pack('!HHHHHHHHHHHH', 82, 0xFFFF, 8, 4, 12, 4, 7, 2, 11, 2, 4, 1)
    tset_ = struct.pack('!HH', 2, 4 + len(trec) + len(t260)) + trec + t260
    start = 1_700_000_100_000
    recs = [
        # src, dst, sport, dport, proto, flags, pkts, octets, rpkts, roctets, rflags, start, end, dir
        ('192.0.2.10', '198.51.100.20', 40001, 443, 6, 0x1b, 10, 1200, 8, 9000, 0x1b, 0, 500, 1),
        ('192.0.2.10', '198.51.100.21', 40002, 22, 6, 0x02, 1, 60, 1, 40, 0x14, 10, 20, 1),
        ('192.0.2.10', '198.51.100.22', 40003, 8080, 6, 0x02, 3, 180, 0, 0, 0x00, 30, 3030, 1),
        ('192.0.2.11', '198.51.100.53', 5353, 53, 17, 0, 1, 70, 1, 120, 0, 40, 41, 1),
        ('192.0.2.11', '198.51.100.54', 5354, 123, 17, 0, 2, 152, 0, 0, 0, 50, 60, 1),
        # biflowDirection 2 (reverseInitiator): the "source" is the responder
        ('198.51.100.30', '192.0.2.12', 443, 40004, 6, 0x12, 5, 4000, 6, 700, 0x1a, 70, 900, 2),
    ]
    body = b''
    for (s, d, sp, dp, pr, fl, pk, oc, rpk, roc, rfl, t0, t1, dr) in recs:
        body += (bytes(map(int, s.split('.'))) + bytes(map(int, d.split('.'))) +
                 struct.pack('!HHBBIIIIBQQB', sp, dp, pr, fl, pk, oc, rpk, roc, rfl, start + t0, start + t1, dr))
    dset = struct.pack('!HH', 259, 4 + len(body)) + body
    name300 = b'x' * 300
    v_recs = [
        (b'\xff' + struct.pack('!H', 300) + name300, '203.0.113.5', '192.0.2.99', 60000, 514, 17),  # FF 01 2C (check value 18)
        (b'\x04eth0', '203.0.113.6', '192.0.2.99', 60001, 514, 17),
    ]
    vbody = b''.join(v + bytes(map(int, s.split('.'))) + bytes(map(int, d.split('.'))) + struct.pack('!HHB', sp, dp, pr)
                     for v, s, d, sp, dp, pr in v_recs)
    vpad = b'\x00' * ((-len(vbody)) % 4)
    vset = struct.pack('!HH', 260, 4 + len(vbody) + len(vpad)) + vbody + vpad
    sets = tset_ + dset + vset
    return struct.pack('!HHIII', 10, 16 + len(sets), export, seq, odid) + sets


def build_ipfix():
    e = 1_700_000_000
    msgs = []
    msgs.append(ipfix(1, 0, e, tset(2, [(256, T256_D1)]), options_template_ipfix()))
    msgs.append(ipfix(1, 0, e + 1,
        data(256, T256_D1, [
            dict(IPV4_SRC_ADDR='10.1.0.5', IPV4_DST_ADDR='198.51.100.7', L4_SRC_PORT=50000, L4_DST_PORT=443,
                 PROTOCOL=6, TCP_FLAGS=0x1b, IN_PKTS=u(12, 8), IN_BYTES=u(3400, 8),
                 flowStartMilliseconds=1_700_000_000_250, flowEndMilliseconds=1_700_000_000_900,
                 SRC_VLAN=42, INPUT_SNMP=u(3, 4), OUTPUT_SNMP=u(7, 4), flowEndReason=u(3, 1)),
            dict(IPV4_SRC_ADDR='10.1.0.5', IPV4_DST_ADDR='198.51.100.8', L4_SRC_PORT=50001, L4_DST_PORT=22,
                 PROTOCOL=6, TCP_FLAGS=0x02, IN_PKTS=u(2, 8), IN_BYTES=u(120, 8),
                 flowStartMilliseconds=1_700_000_000_300, flowEndMilliseconds=1_700_000_001_300,
                 SRC_VLAN=42, INPUT_SNMP=u(3, 4), OUTPUT_SNMP=u(7, 4), flowEndReason=u(1, 1)),
            dict(IPV4_SRC_ADDR='10.1.0.6', IPV4_DST_ADDR='203.0.113.9', L4_SRC_PORT=5000, L4_DST_PORT=53,
                 PROTOCOL=17, TCP_FLAGS=0, IN_PKTS=u(1, 8), IN_BYTES=u(64, 8),
                 flowStartMilliseconds=1_700_000_000_400, flowEndMilliseconds=1_700_000_000_400,
                 SRC_VLAN=43, INPUT_SNMP=u(3, 4), OUTPUT_SNMP=u(7, 4), flowEndReason=u(1, 1)),
        ]),
        NetflowDataflowsetV9(templateID=257, records=[
            GetNetflowRecordV9(tset(2, [(257, [(149, 4), (160, 8)])]), templateID=257)(
                observationDomainId=1, systemInitTimeMilliseconds=SYSINIT)])))
    # domain 2 reuses template id 256 with another layout: templates are per domain (RFC 7011 section 8)
    msgs.append(ipfix(2, 0, e + 2, tset(2, [(256, T256_D2)]), data(256, T256_D2, [
        dict(IPV6_SRC_ADDR='2001:db8:60::10', IPV6_DST_ADDR='2001:db8:1::1', PROTOCOL=58, icmpTypeCodeIPv6=u(0x8000, 2),
             IN_PKTS=u(4, 4), IN_BYTES=u(416, 4), flowStartSeconds=1_700_000_001, flowEndSeconds=1_700_000_004),
        dict(IPV6_SRC_ADDR='2001:db8:60::10', IPV6_DST_ADDR='::ffff:198.51.100.40', PROTOCOL=6, icmpTypeCodeIPv6=u(0, 2),
             IN_PKTS=u(3, 4), IN_BYTES=u(200, 4), flowStartSeconds=1_700_000_002, flowEndSeconds=1_700_000_003),
    ])))
    # flowStart/EndSysUpTime, made absolute with systemInitTimeMilliseconds from the options record
    msgs.append(ipfix(1, 4, e + 3, tset(2, [(258, T258)]), data(258, T258, [
        dict(IPV4_SRC_ADDR='10.1.0.7', IPV4_DST_ADDR='192.0.2.80', L4_SRC_PORT=40000, L4_DST_PORT=80, PROTOCOL=6,
             FIRST_SWITCHED=10_000_000, LAST_SWITCHED=10_002_500, IN_PKTS=u(5, 4), IN_BYTES=u(500, 4)),
        dict(IPV4_SRC_ADDR='10.1.0.8', IPV4_DST_ADDR='192.0.2.81', L4_SRC_PORT=40001, L4_DST_PORT=123, PROTOCOL=17,
             FIRST_SWITCHED=10_001_000, LAST_SWITCHED=10_001_000, IN_PKTS=u(1, 4), IN_BYTES=u(76, 4)),
    ])))
    # sequence 9 where 6 was expected: 3 records lost; template 256 redefined (ICMP, microseconds)
    m5 = NetflowHeader(version=10) / NetflowHeaderV10(ExportTime=e + 4, flowSequence=9, ObservationDomainID=1) / \
        tset(2, [(256, T256_REDEF)])
    cls = record_class(256, T256_REDEF)
    rec = cls(IPV4_SRC_ADDR='10.1.0.9', IPV4_DST_ADDR='198.51.100.99', L4_SRC_PORT=0, L4_DST_PORT=0, PROTOCOL=1,
              ICMP_TYPE=0x0303, IN_PKTS=u(1, 4), IN_BYTES=u(56, 4))
    # scapy's microsecond field type does not build NTP values: patch the two 8-octet slots with struct
    rb = raw(rec)[:-16] + ntp(1_700_000_004_125) + ntp(1_700_000_004_126)
    m5 = m5 / NetflowDataflowsetV9(templateID=256, records=[cls(rb)])
    msgs.append(fix_length(raw(m5)))
    # data before template: domain 2 gets a set for template 300 first
    d300 = dict(IPV4_SRC_ADDR='10.2.0.1', IPV4_DST_ADDR='203.0.113.50', L4_SRC_PORT=33333, L4_DST_PORT=25, PROTOCOL=6,
                TCP_FLAGS=0x1b, IN_PKTS=u(9, 4), IN_BYTES=u(900, 4),
                flowStartMilliseconds=1_700_000_005_000, flowEndMilliseconds=1_700_000_006_000)
    msgs.append(ipfix(2, 2, e + 5, data(300, T300, [d300])))
    msgs.append(ipfix(2, 3, e + 6, tset(2, [(300, T300)]), data(300, T300, [
        dict(d300, L4_SRC_PORT=33334, TCP_FLAGS=0x02, IN_PKTS=u(1, 4), IN_BYTES=u(60, 4))])))
    msgs.append(biflow_message(1, 10, e + 7))
    return msgs


# ---------------------------------------------------------------- the NetFlow v9 file
V256 = [(8, 4), (12, 4), (7, 2), (11, 2), (4, 1), (6, 1), (2, 4), (1, 4), (22, 4), (21, 4), (10, 2), (14, 2)]
V256_6 = [(27, 16), (28, 16), (7, 2), (11, 2), (4, 1), (2, 4), (1, 4), (22, 4), (21, 4)]


def v9(source, seq, uptime, secs, *sets):
    p = NetflowHeader(version=9) / NetflowHeaderV9(sysUptime=uptime, unixSecs=secs, packageSequence=seq, SourceID=source)
    for s in sets:
        p = p / s
    return raw(p)


def v9rec(s, d, sp, dp, pr, fl, pk, oc, first, last):
    return dict(IPV4_SRC_ADDR=s, IPV4_DST_ADDR=d, L4_SRC_PORT=sp, L4_DST_PORT=dp, PROTOCOL=pr, TCP_FLAGS=fl,
                IN_PKTS=u(pk, 4), IN_BYTES=u(oc, 4), FIRST_SWITCHED=first, LAST_SWITCHED=last,
                INPUT_SNMP=u(1, 2), OUTPUT_SNMP=u(2, 2))


def build_v9():
    opts = NetflowOptionsFlowsetV9(templateID=257, option_scope_length=4, option_field_length=4,
                                   scopes=[NetflowOptionsFlowsetScopeV9(scopeFieldType=1, scopeFieldlength=4)],
                                   options=[NetflowOptionsFlowsetOptionV9(optionFieldType=34, optionFieldlength=4)],
                                   pad=b'\x00\x00')
    pkts = []
    # check value 20: unix_secs 1700000000, sysUpTime 100000, FIRST_SWITCHED 40000 -> 1699999940000
    pkts.append(v9(1, 0, 100_000, 1_700_000_000, tset(0, [(256, V256)]), opts, data(256, V256, [
        v9rec('192.168.60.10', '198.51.100.1', 51000, 443, 6, 0x1b, 20, 8000, 40_000, 90_000),
        v9rec('192.168.60.11', '198.51.100.2', 51001, 443, 6, 0x02, 1, 60, 95_000, 95_000),
    ])))
    pkts.append(v9(2, 0, 5_000, 1_700_000_001, tset(0, [(256, V256_6)]), data(256, V256_6, [
        dict(IPV6_SRC_ADDR='2001:db8:60:1::5', IPV6_DST_ADDR='2001:db8:ffff::53', L4_SRC_PORT=5300, L4_DST_PORT=53,
             PROTOCOL=17, IN_PKTS=u(1, 4), IN_BYTES=u(80, 4), FIRST_SWITCHED=4_000, LAST_SWITCHED=4_000),
    ])))
    # sysUpTime wrapped (2^32 ms, check value 42): FIRST_SWITCHED from before the wrap
    pkts.append(v9(1, 1, 1_000, 1_700_000_002, data(256, V256, [
        v9rec('192.168.60.12', '203.0.113.7', 51002, 993, 6, 0x1b, 7, 900, 4_294_960_000, 500),
    ]), NetflowDataflowsetV9(templateID=257, records=[
        GetNetflowRecordV9(tset(0, [(257, [(1, 4), (34, 4)])]), templateID=257)(IN_BYTES=u(1, 4), SAMPLING_INTERVAL=1)])))
    # sequence 3 where 2 was expected (1 packet lost); data for template 300 before its template
    V300 = [(8, 4), (12, 4), (7, 2), (11, 2), (4, 1), (2, 4), (1, 4), (22, 4), (21, 4)]
    r300 = dict(IPV4_SRC_ADDR='192.168.60.13', IPV4_DST_ADDR='192.0.2.200', L4_SRC_PORT=6000, L4_DST_PORT=514,
                PROTOCOL=17, IN_PKTS=u(3, 4), IN_BYTES=u(300, 4), FIRST_SWITCHED=2_000, LAST_SWITCHED=2_900)
    pkts.append(v9(1, 3, 3_000, 1_700_000_003, data(300, V300, [r300])))
    pkts.append(v9(1, 4, 4_000, 1_700_000_004, tset(0, [(300, V300)]), data(300, V300, [
        dict(r300, L4_SRC_PORT=6001, FIRST_SWITCHED=3_500, LAST_SWITCHED=3_900)])))
    return pkts


# ---------------------------------------------------------------- the NetFlow v5 file
def v5(seq, uptime, secs, nsecs, engine_type, engine_id, recs):
    from scapy.layers.netflow import NetflowHeaderV5, NetflowRecordV5
    p = NetflowHeader(version=5) / NetflowHeaderV5(count=len(recs), sysUptime=uptime, unixSecs=secs,
                                                   unixNanoSeconds=nsecs, flowSequence=seq,
                                                   engineType=engine_type, engineID=engine_id)
    for r in recs:
        p = p / NetflowRecordV5(**r)
    return raw(p)


def v5rec(s, d, sp, dp, pr, fl, pk, oc, first, last):
    return dict(src=s, dst=d, nexthop='0.0.0.0', input=1, output=2, dpkts=pk, dOctets=oc, first=first, last=last,
                srcport=sp, dstport=dp, tcpFlags=fl, prot=pr, tos=0, src_as=64500, dst_as=64501, src_mask=24, dst_mask=24)


def build_v5():
    pkts = []
    # unix time 1700000000.250 (nsecs 250 000 000), sysUptime 100000 ms: First 40000 -> 1699999940250
    pkts.append(v5(0, 100_000, 1_700_000_000, 250_000_000, 0, 3, [
        v5rec('10.3.0.5', '198.51.100.30', 52000, 443, 6, 0x1b, 10, 5000, 40_000, 90_000),
        v5rec('10.3.0.6', '198.51.100.31', 52001, 22, 6, 0x02, 2, 120, 95_000, 96_000),
        v5rec('10.3.0.7', '192.0.2.53', 5353, 53, 17, 0, 1, 70, 99_000, 99_000),
    ]))
    # flow_sequence counts flows: 3 expected, 5 sent -> 2 records lost; another engine (type 1, id 4)
    pkts.append(v5(5, 200_000, 1_700_000_100, 0, 0, 3, [
        v5rec('10.3.0.8', '203.0.113.70', 52002, 80, 6, 0x12, 4, 400, 150_000, 190_000),
    ]))
    pkts.append(v5(0, 50_000, 1_700_000_100, 0, 1, 4, [
        v5rec('10.3.0.9', '203.0.113.71', 0, 0x0800, 1, 0, 3, 252, 49_000, 49_500),
    ]))
    return pkts


def expect_v5(pkts, label):
    """Dissects each packet with scapy and maps the v5 fields onto the IE numbering v9 kept."""
    from scapy.layers.netflow import NetflowHeaderV5, NetflowRecordV5
    out = []
    for m in pkts:
        hdr = NetflowHeader(m)
        h = hdr[NetflowHeaderV5]
        export_ms = h.unixSecs * 1000 + h.unixNanoSeconds // 1_000_000
        engine = h.engineType * 256 + h.engineID
        cur = h.payload
        while isinstance(cur, NetflowRecordV5):
            f = {8: cur.src, 12: cur.dst, 2: int(cur.dpkts), 1: int(cur.dOctets), 22: int(cur.first),
                 21: int(cur.last), 7: int(cur.srcport), 11: int(cur.dstport), 6: int(cur.tcpFlags), 4: int(cur.prot)}
            out.append(flow(f, f'{label}/{engine}', export_ms, v9_uptime=h.sysUptime))
            cur = cur.payload
    return out


# ---------------------------------------------------------------- expected records
def outcome(proto, flags, rflags, rpkts, biflow, has_flags, has_rflags):
    """docs/flow-inputs.md, Outcome rules (same as src/flowlog/outcome.ts); `rpkts` here is anything
    that came back, reverse packets or reverse octets."""
    SYN, RST, ACK = 2, 4, 16
    if proto in (1, 58):
        return 'n/a'
    if proto != 6 or not has_flags:
        return ('established' if rpkts > 0 else 'unanswered') if biflow else 'n/a'
    if not flags & SYN:
        return 'partial'
    if biflow and has_rflags:
        if rflags & RST:
            return 'rejected'
        if rflags & (SYN | ACK) == SYN | ACK:
            return 'established' if flags & ACK else 'partial'
        return 'unanswered' if rpkts == 0 and rflags == 0 else 'partial'
    if biflow and rpkts == 0:
        return 'unanswered'
    if flags & ACK:
        return 'established'
    return 'partial' if biflow else 'unanswered'


def norm6(a):
    import ipaddress
    ip = ipaddress.ip_address(a)
    if ip.version == 6 and ip.ipv4_mapped:
        return str(ip.ipv4_mapped)
    return str(ip)  # Python prints RFC 5952 form


def to_int(v):
    return int.from_bytes(v, 'big') if isinstance(v, bytes) else int(v)


def flow(f, exporter, export_ms, v9_uptime=None, sysinit=None, biflow=False, has_rflags=False):
    """Maps {ie or ('r', ie): value} of one data record to a FlowRecord dict (docs/flow-inputs.md)."""
    def side(ms, ntp_ms, sec, up):
        if ms in f:
            return f[ms]
        if ntp_ms in f:
            return f[ntp_ms]
        if sec in f:
            return f[sec] * 1000
        if up in f:
            if v9_uptime is not None:
                return export_ms - ((v9_uptime - f[up]) % 2**32)
            if sysinit is not None:
                return sysinit + f[up]
        return None
    start, end = side(152, 154, 150, 22), side(153, 155, 151, 21)
    start = start if start is not None else (end if end is not None else export_ms)
    end = end if end is not None else start
    src = f.get(8) or norm6(f[27])
    dst = f.get(12) or norm6(f[28])
    proto = f.get(4, 0)
    sport, dport = f.get(7, 0), f.get(11, 0)
    if proto in (1, 58):
        sport = 0
        if 32 in f or 139 in f:
            dport = f.get(32, f.get(139))
    pkts, octets = f.get(2, 0), f.get(1, 0)
    rpkts, roctets = f.get(('r', 2), 0), f.get(('r', 1), 0)
    flags, rflags = f.get(6, 0), f.get(('r', 6), 0)
    has_flags = 6 in f
    if f.get(239) == 2:
        src, dst = dst, src
        sport, dport = dport, sport
        pkts, rpkts, octets, roctets, flags, rflags = rpkts, pkts, roctets, octets, rflags, flags
        has_flags, has_rflags = has_rflags, has_flags
    rec = dict(start=start, end=end, proto=proto, src=src, dst=dst, sport=sport, dport=dport, pkts=pkts,
               bytes=octets, rpkts=rpkts, rbytes=roctets, flags=flags, rflags=rflags,
               outcome=outcome(proto, flags, rflags, rpkts + roctets, biflow, has_flags, has_rflags), exporter=exporter)
    if 58 in f:
        rec['vlan'] = f[58] & 0xFFF
    return rec


def scapy_fields(rec, layout):
    """The dissected record's values keyed by IE id (layout order = field order)."""
    out = {}
    for (ie, _ln), fd in zip(layout, rec.fields_desc):
        v = rec.getfieldval(fd.name)
        out[ie] = v if ie in (8, 12, 27, 28) else to_int(v)
    return out


def ntp_ms(b):
    sec, frac = struct.unpack('!II', b)
    return (sec - NTP_UNIX) * 1000 + (frac / 2**32) * 1000


def expect_ipfix(msgs, label):
    """Dissects each message with scapy, per observation domain: scapy keys templates by id only, so each
    data set is re-dissected together with the message that defined its (domain, template id)."""
    out = []
    defined = {}  # (odid, tid) -> (layout or 'options', raw template message)
    sysinit = {}
    pending = {}
    for m in msgs:
        hdr = NetflowHeader(m)
        odid = hdr[NetflowHeaderV10].ObservationDomainID
        export_ms = hdr[NetflowHeaderV10].ExportTime * 1000
        if hdr[NetflowHeaderV10].length != len(m):
            raise SystemExit('bad message length')
        if m[16:18] == b'\x00\x02' and struct.unpack('!H', m[20:22])[0] == 259:
            out.extend(expect_biflow(m, f'{label}/{odid}', export_ms))
            continue
        cur = hdr
        while NetflowFlowsetV9 in cur:
            cur = cur[NetflowFlowsetV9]
            for t in cur.templates:
                defined[(odid, t.templateID)] = ([(x.fieldType, x.fieldLength) for x in t.template_fields], m)
                for held in pending.pop((odid, t.templateID), []):
                    out.extend(decode_data(held, odid, defined, sysinit, label))
            cur = cur.payload
        if NetflowOptionsFlowset10 in hdr:
            o = hdr[NetflowOptionsFlowset10]
            fields = [(x.scopeFieldType, x.scopeFieldlength) for x in o.scopes] + \
                [(x.optionFieldType, x.optionFieldlength) for x in o.options]
            defined[(odid, o.templateID)] = (('options', fields), m)
        for ds in iter_sets(hdr):
            item = (m, export_ms, ds.templateID)
            if (odid, ds.templateID) not in defined:
                pending.setdefault((odid, ds.templateID), []).append(item)
            else:
                out.extend(decode_data(item, odid, defined, sysinit, label))
    return out


def decode_data(item, odid, defined, sysinit, label):
    """Dissects one data set of message `m` with scapy, after the message that defined its template."""
    m, export_ms, tid = item
    layout, tmsg = defined[(odid, tid)]
    if layout[0] == 'options':
        # scapy 2.5's defragmenter does not recognise IPFIX options templates: read the one options
        # record from the set scapy dissected (raw fieldValue) at the offsets the scapy template gives
        for ds in iter_sets(NetflowHeader(m)):
            if ds.templateID == tid:
                body, q = ds.records[0].fieldValue, 0
                for ie, ln in layout[1]:
                    if ie == 160:
                        sysinit[odid] = int.from_bytes(body[q:q + ln], 'big')
                    q += ln
        return []
    plist = [NetflowHeader(tmsg), NetflowHeader(m)]
    netflowv9_defragment(plist)
    recs = []
    for ds in iter_sets(plist[1]):
        if ds.templateID != tid:
            continue
        for r in ds.records:
            f = scapy_fields(r, layout)
            if 154 in f:  # scapy does not read NTP timestamps; take the 8 octets from the raw record
                rb = raw(r)
                f[154], f[155] = ntp_ms(rb[-16:-8]), ntp_ms(rb[-8:])
            recs.append(flow(f, f'{label}/{odid}', export_ms, sysinit=sysinit.get(odid)))
    return recs


def iter_sets(pkt):
    cur = pkt
    while NetflowDataflowsetV9 in cur:
        ds = cur[NetflowDataflowsetV9]
        yield ds
        cur = ds.payload


def expect_biflow(m, exporter, export_ms):
    """The struct-built biflow message, parsed back with struct."""
    out = []
    p = 16
    templates = {}
    while p < len(m):
        sid, slen = struct.unpack('!HH', m[p:p + 4])
        body, end = p + 4, p + slen
        if sid == 2:
            q = body
            while q + 4 <= end:
                tid, cnt = struct.unpack('!HH', m[q:q + 4])
                q += 4
                fl = []
                for _ in range(cnt):
                    ie, ln = struct.unpack('!HH', m[q:q + 4])
                    q += 4
                    pen = 0
                    if ie & 0x8000:
                        pen = struct.unpack('!I', m[q:q + 4])[0]
                        q += 4
                    fl.append((ie & 0x7FFF, ln, pen))
                templates[tid] = fl
        else:
            fl = templates[sid]
            fixed = sum(1 if ln == 0xFFFF else ln for _, ln, _ in fl)
            q = body
            while q + fixed <= end:
                f = {}
                for ie, ln, pen in fl:
                    if ln == 0xFFFF:
                        ln = m[q]
                        q += 1
                        if ln == 255:
                            ln = struct.unpack('!H', m[q:q + 2])[0]
                            q += 2
                    v = m[q:q + ln]
                    q += ln
                    key = ('r', ie) if pen == REV else ie
                    f[key] = '.'.join(map(str, v)) if ie in (8, 12) and ln == 4 else int.from_bytes(v, 'big')
                biflow = any(pen == REV for _, _, pen in fl)
                out.append(flow(f, exporter, export_ms, biflow=biflow, has_rflags=('r', 6) in f))
        p = end
    return out


def expect_v9(pkts, label):
    out = []
    layouts = {}
    pending = {}
    for m in pkts:
        hdr = NetflowHeader(m)
        h = hdr[NetflowHeaderV9]
        src, uptime, export_ms = h.SourceID, h.sysUptime, h.unixSecs * 1000
        cur = hdr
        while NetflowFlowsetV9 in cur:
            cur = cur[NetflowFlowsetV9]
            for t in cur.templates:
                layouts[(src, t.templateID)] = [(x.fieldType, x.fieldLength) for x in t.template_fields]
                for held in pending.pop((src, t.templateID), []):
                    out.extend(decode_v9(held, layouts, label))
            cur = cur.payload
        if NetflowOptionsFlowsetV9 in hdr:
            layouts[(src, hdr[NetflowOptionsFlowsetV9].templateID)] = 'options'
        for ds in iter_sets(hdr):
            item = (m, src, uptime, export_ms, ds.templateID)
            if (src, ds.templateID) not in layouts:
                pending.setdefault((src, ds.templateID), []).append(item)
            else:
                out.extend(decode_v9(item, layouts, label))
    return out


def decode_v9(item, layouts, label):
    m, src, uptime, export_ms, tid = item
    layout = layouts[(src, tid)]
    if layout == 'options':
        return []
    tpkt = raw(NetflowHeader(version=9) / NetflowHeaderV9(SourceID=src) / tset(0, [(tid, layout)]))
    plist = [NetflowHeader(tpkt), NetflowHeader(m)]
    netflowv9_defragment(plist)
    recs = []
    for ds in iter_sets(plist[1]):
        if ds.templateID == tid:
            for r in ds.records:
                recs.append(flow(scapy_fields(r, layout), f'{label}/{src}', export_ms, v9_uptime=uptime))
    return recs


# the capture of export traffic: IPFIX from an IPv4 exporter, NetFlow v9 from an IPv6 one (RFC 5737,
# RFC 3849 documentation addresses), plus two packets that are not exports
IPFIX_EXPORTER = ('192.0.2.1', 50123)
V9_EXPORTER = ('2001:db8:60::2', 50200)
V5_EXPORTER = ('192.0.2.3', 50300)
MAC_A, MAC_B = '02:00:00:00:00:01', '02:00:00:00:00:02'


def build_capture(msgs, pkts, v5pkts):
    from scapy.layers.inet import IP, TCP, UDP
    from scapy.layers.inet6 import IPv6
    from scapy.layers.l2 import Ether
    from scapy.packet import Raw
    frames = []
    for m in msgs:
        frames.append(Ether(src=MAC_A, dst=MAC_B) / IP(src=IPFIX_EXPORTER[0], dst='192.0.2.250') /
                      UDP(sport=IPFIX_EXPORTER[1], dport=4739) / Raw(m))
    frames.insert(2, Ether(src=MAC_A, dst=MAC_B) / IP(src='192.0.2.7', dst='192.0.2.53') / UDP(sport=5353, dport=53) / Raw(b'\x00' * 12))
    for m in pkts:
        frames.append(Ether(src=MAC_A, dst=MAC_B) / IPv6(src=V9_EXPORTER[0], dst='2001:db8:60::250') /
                      UDP(sport=V9_EXPORTER[1], dport=2055) / Raw(m))
    frames.append(Ether(src=MAC_A, dst=MAC_B) / IP(src='192.0.2.7', dst='192.0.2.250') / TCP(sport=40000, dport=4739, flags='S'))
    for m in v5pkts:
        frames.append(Ether(src=MAC_A, dst=MAC_B) / IP(src=V5_EXPORTER[0], dst='192.0.2.250') /
                      UDP(sport=V5_EXPORTER[1], dport=2055) / Raw(m))
    for i, f in enumerate(frames):
        f.time = 1_700_000_000 + i
    return frames


def main():
    out_dir = sys.argv[1] if len(sys.argv) > 1 else os.path.join(os.path.dirname(os.path.abspath(__file__)), 'flowlog')
    os.makedirs(out_dir, exist_ok=True)
    msgs = build_ipfix()
    with open(os.path.join(out_dir, 'ipfix_mixed.ipfix'), 'wb') as fh:
        fh.write(b''.join(msgs))
    pkts = build_v9()
    with open(os.path.join(out_dir, 'netflow9_mixed.nf9'), 'wb') as fh:
        fh.write(b''.join(pkts))
    v5pkts = build_v5()
    with open(os.path.join(out_dir, 'netflow5_mixed.nf5'), 'wb') as fh:
        fh.write(b''.join(v5pkts))
    from scapy.utils import wrpcap
    wrpcap(os.path.join(out_dir, 'exports_mixed.pcap'), build_capture(msgs, pkts, v5pkts))
    captured = expect_ipfix(msgs, '%s:%d' % IPFIX_EXPORTER) + expect_v9(pkts, '[%s]:%d' % V9_EXPORTER) + \
        expect_v5(v5pkts, '%s:%d' % V5_EXPORTER)
    for name, recs in (('ipfix_mixed.ipfix', expect_ipfix(msgs, 'ipfix_mixed.ipfix')),
                       ('netflow9_mixed.nf9', expect_v9(pkts, 'netflow9_mixed.nf9')),
                       ('netflow5_mixed.nf5', expect_v5(v5pkts, 'netflow5_mixed.nf5')),
                       ('exports_mixed.pcap', captured)):
        with open(os.path.join(out_dir, name + '.expected.json'), 'w') as fh:
            json.dump(recs, fh, indent=1, sort_keys=False)
            fh.write('\n')


if __name__ == '__main__':
    main()
