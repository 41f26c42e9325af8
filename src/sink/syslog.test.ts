import { createSocket } from 'node:dgram';
import { createServer, type AddressInfo, type Server } from 'node:net';
import { afterEach, describe, expect, it } from 'vitest';
import type { Alert } from '../alert/alert.js';
import { alertToJson } from '../alert/serialize.js';
import { formatSyslog, frameOctetCounted, openSyslogSink, parseSyslogTarget, syslogPri } from './syslog.js';

function alert(over: Partial<Alert> = {}): Alert {
  return {
    schema: 'tidewatch.alert/1', id: 'tw1-0123456789abcdef', kind: 'horizontal-scan', severity: 'high',
    host: '10.60.2.14', role: 'source', start: '2024-05-06T07:00:00.000Z', end: '2024-05-06T07:01:00.000Z',
    state: 'open', feature: 'max_peers_per_port', observed: 254, expected: 2, low: 0, high: 5, score: 17.256,
    evidence: { top_peers: [], top_ports: [{ port: 445, count: 254 }], sample_flows: [], flows: 254, packets: 254, bytes: 11176 },
    rule: 'scan.horizontal', sensor: 'clinic-gw', ...over,
  };
}

const T = Date.UTC(2024, 4, 6, 7, 1, 0, 5);
const BOM = Buffer.from([0xef, 0xbb, 0xbf]);

/** Splits a syslog message into header fields, SD and MSG (RFC 5424 section 6 ABNF). */
function parseMessage(msg: Buffer) {
  const bom = msg.indexOf(BOM);
  const head = msg.subarray(0, bom).toString('utf8');
  const m = /^<(\d{1,3})>1 (\S+) (\S+) (\S+) (\S+) (\S+) (\[.*\]) $/.exec(head);
  if (!m) throw new Error(`not RFC 5424: ${head}`);
  return { pri: Number(m[1]), ts: m[2], host: m[3], app: m[4], procid: m[5], msgid: m[6], sd: m[7], msg: msg.subarray(bom + 3).toString('utf8') };
}

/** Reads octet-counted frames `LEN SP MSG` (RFC 6587 section 3.4.1). */
function unframe(buf: Buffer): Buffer[] {
  const out: Buffer[] = [];
  let off = 0;
  while (off < buf.length) {
    const sp = buf.indexOf(0x20, off);
    const len = Number(buf.subarray(off, sp).toString('ascii'));
    out.push(buf.subarray(sp + 1, sp + 1 + len));
    off = sp + 1 + len;
  }
  return out;
}

describe('RFC 5424 formatting', () => {
  it('PRI = facility * 8 + severity: METHODS row 38 check values', () => {
    // RFC 5424 section 6.2.1 and its examples: <34> is facility 4 severity 2, <165> local4 notice.
    expect(syslogPri(4, 2)).toBe(34);
    expect(syslogPri(20, 5)).toBe(165);
    expect(syslogPri(23, 7)).toBe(191);
    expect(syslogPri(16, 3)).toBe(131);
    expect(() => syslogPri(24, 0)).toThrow(RangeError);
  });

  it('writes header, SD element and BOM + alert JSON, which parse back', () => {
    const a = alert();
    const p = parseMessage(formatSyslog(a, T, { hostname: 'sensor-1.example', procid: '4242' }));
    expect(p.pri).toBe(131); // local0 (16) * 8 + Error (3) for high, METHODS 8.1 mapping
    expect(p.ts).toBe('2024-05-06T07:01:00.005Z'); // RFC 3339, at most 6 fractional digits (RFC 5424 6.2.3)
    expect([p.host, p.app, p.procid, p.msgid]).toEqual(['sensor-1.example', 'tidewatch', '4242', 'horizontal-scan']);
    expect(p.sd).toBe('[tidewatch@32473 kind="horizontal-scan" host="10.60.2.14" score="17.26"]');
    expect(p.msg).toBe(alertToJson(a));
    expect(JSON.parse(p.msg)).toMatchObject({ id: a.id, score: 17.26 });
  });

  it('maps severities critical/high/medium/low to 2/3/4/5 and escapes ", \\ and ] in SD values (RFC 5424 6.3.3)', () => {
    const pris = (['critical', 'high', 'medium', 'low'] as const).map((severity) => parseMessage(formatSyslog(alert({ severity }), T, { facility: 4 })).pri);
    expect(pris).toEqual([34, 35, 36, 37]);
    const p = parseMessage(formatSyslog(alert({ host: 'a"b\\c]d' }), T, { hostname: 'h o\nst' }));
    expect(p.sd).toContain('host="a\\"b\\\\c\\]d"');
    expect(p.host).toBe('host'); // HOSTNAME is PRINTUSASCII only (RFC 5424 6.2.4)
  });

  it('frames by octet count of the message bytes, not characters (RFC 6587 3.4.1)', () => {
    const msg = formatSyslog(alert({ sensor: 'Zürich' }), T);
    const framed = frameOctetCounted(msg);
    expect(framed.subarray(0, framed.indexOf(0x20)).toString()).toBe(String(msg.length));
    expect(unframe(Buffer.concat([framed, framed]))).toEqual([msg, msg]);
  });

  it('parses udp:// and tcp:// targets, IPv6 in brackets', () => {
    expect(parseSyslogTarget('udp://127.0.0.1:514')).toEqual({ transport: 'udp', host: '127.0.0.1', port: 514 });
    expect(parseSyslogTarget('tcp://[::1]:6514')).toEqual({ transport: 'tcp', host: '::1', port: 6514 });
    for (const bad of ['udp://host', 'http://h:1', 'tcp://h:0', 'tcp://h:70000']) expect(() => parseSyslogTarget(bad)).toThrow(RangeError);
  });
});

describe('syslog sinks on loopback', () => {
  const servers: Server[] = [];
  afterEach(() => {
    for (const s of servers.splice(0)) s.close();
  });

  function tcpServer(port = 0): Promise<{ port: number; received: () => Buffer }> {
    const chunks: Buffer[] = [];
    const srv = createServer((c) => c.on('data', (d: Buffer) => chunks.push(d)));
    servers.push(srv);
    return new Promise((resolve) => srv.listen(port, '127.0.0.1', () =>
      resolve({ port: (srv.address() as AddressInfo).port, received: () => Buffer.concat(chunks) })));
  }

  async function until(cond: () => boolean, ms = 3000): Promise<void> {
    const end = Date.now() + ms;
    while (!cond() && Date.now() < end) await new Promise((r) => setTimeout(r, 10));
  }

  it('UDP: one message per datagram', async () => {
    const rx = createSocket('udp4');
    const got: Buffer[] = [];
    rx.on('message', (m) => got.push(m));
    await new Promise<void>((r) => rx.bind(0, '127.0.0.1', () => r()));
    const sink = openSyslogSink(`udp://127.0.0.1:${rx.address().port}`, { hostname: 'h' });
    for (let i = 0; i < 3; i++) sink.send(alert({ id: `tw1-000000000000000${i}` }));
    await until(() => got.length === 3);
    await sink.close();
    rx.close();
    expect(got.map((m) => JSON.parse(parseMessage(m).msg).id)).toEqual(['tw1-0000000000000000', 'tw1-0000000000000001', 'tw1-0000000000000002']);
    expect(sink.stats).toMatchObject({ sent: 3, dropped: 0 });
  });

  it('TCP: octet-counted frames parse back in order', async () => {
    const srv = await tcpServer();
    const sink = openSyslogSink(`tcp://127.0.0.1:${srv.port}`, { hostname: 'h' });
    for (let i = 0; i < 50; i++) sink.send(alert({ observed: i }));
    await sink.close();
    await until(() => unframe(srv.received()).length === 50);
    const frames = unframe(srv.received());
    expect(frames.map((f) => JSON.parse(parseMessage(f).msg).observed)).toEqual(Array.from({ length: 50 }, (_, i) => i));
    expect(sink.stats).toMatchObject({ sent: 50, dropped: 0 });
  });

  it('TCP: queues while the receiver is down, reconnects with backoff, counts drops of a full queue', async () => {
    const probe = await tcpServer();
    const port = probe.port;
    await new Promise<void>((r) => servers.pop()!.close(() => r())); // the port is free again, nobody listens
    const sink = openSyslogSink(`tcp://127.0.0.1:${port}`, { hostname: 'h', maxQueue: 3, backoffMinMs: 20, backoffMaxMs: 80 });
    for (let i = 0; i < 5; i++) sink.send(alert({ observed: i }));
    expect(sink.stats.dropped).toBe(2);
    await new Promise((r) => setTimeout(r, 100));
    const srv = await tcpServer(port);
    await until(() => unframe(srv.received()).length === 3);
    await sink.close(1000);
    expect(unframe(srv.received()).map((f) => JSON.parse(parseMessage(f).msg).observed)).toEqual([0, 1, 2]);
    expect(sink.stats.reconnects).toBeGreaterThanOrEqual(1);
  });

  it('TCP: close() gives up after its timeout and counts what was left', async () => {
    const probe = await tcpServer();
    const port = probe.port;
    await new Promise<void>((r) => servers.pop()!.close(() => r()));
    const sink = openSyslogSink(`tcp://127.0.0.1:${port}`, { hostname: 'h', backoffMinMs: 20 });
    sink.send(alert());
    sink.send(alert());
    const t0 = Date.now();
    await sink.close(150);
    expect(Date.now() - t0).toBeLessThan(1000);
    expect(sink.stats).toMatchObject({ sent: 0, dropped: 2 });
  });
});
