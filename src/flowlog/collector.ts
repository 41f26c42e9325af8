import { createSocket, type RemoteInfo, type Socket } from 'node:dgram';
import { createServer, isIPv6, type AddressInfo, type Server, type Socket as TcpSocket } from 'node:net';
import type { FlowSink } from '../flow/record.js';
import { StreamSource } from '../ingest/source.js';
import type { InputProblem } from '../util/problem.js';
import { ipfixFileStep } from './file-ingest.js';
import { driveFrames } from './framing.js';
import { ExporterDecoder, type ExportFormat } from './exporter-decoder.js';
import { V5_VERSION } from './netflow5.js';
import { TemplateBudget, type ExportSession } from './session.js';

/** Where to listen, each `HOST:PORT` (`[v6]:PORT`; a bare `PORT` or `:PORT` binds 127.0.0.1). */
/** Requested socket receive buffer for UDP listeners, in octets. */
export const UDP_RECEIVE_BUFFER = 4 << 20;

export interface CollectorListen {
  ipfixUdp?: string;
  ipfixTcp?: string;
  netflowUdp?: string;
}

/** The counters kept per exporter, and summed over all of them for the collector. */
export interface ExporterCounts {
  datagrams: number;
  messages: number;
  records: number;
  flows: number;
  /** Problems of any kind (bad headers, overruns, caps, ...). */
  malformed: number;
  /** Data sets dropped for want of a template. */
  unknownTemplate: number;
  /** IPFIX: data records lost by sequence numbers; NetFlow v9: export packets lost. */
  sequenceLost: number;
  /** Templates refused over the per-exporter or total template cap. */
  templatesOverCap: number;
  /** Data sets dropped because the wait buffer for templates not yet seen was full. */
  pendingOverCap: number;
}

export interface ExporterStats extends ExporterCounts {
  /** `ADDR:PORT` of the exporter (IPv6 in brackets). */
  exporter: string;
  format: ExportFormat;
  transport: 'udp' | 'tcp';
}

export interface CollectorStats extends ExporterCounts {
  /** Datagrams or connections refused because too many exporters were already known. */
  exportersOverCap: number;
  /** Datagrams dropped unread for being longer than the datagram cap. */
  datagramsOverCap: number;
  exporters: ExporterStats[];
}

export interface CollectorAddresses {
  ipfixUdp?: AddressInfo;
  ipfixTcp?: AddressInfo;
  netflowUdp?: AddressInfo;
}

export interface CollectorHandle {
  close(): Promise<void>;
  stats(): CollectorStats;
  /** Bound addresses, so callers (tests) can listen on port 0. */
  addresses(): CollectorAddresses;
}

/** Exporters (address and port, or TCP connections) tracked at once (ours, no source). */
export const MAX_EXPORTERS = 4096;
/** Longest datagram decoded: an IPFIX message or v9 packet is at most 65535 octets (RFC 7011 section 3.1). */
export const MAX_DATAGRAM_BYTES = 65_535;

/** Caps of one collector (src/util/caps.ts lists them); tests lower them. */
export interface CollectorCaps {
  maxExporters?: number;
  maxDatagramBytes?: number;
}
export const DEFAULT_BIND = '127.0.0.1';

/**
 * Parses `HOST:PORT`, `[V6]:PORT`, `:PORT` or `PORT`. Without a written host the collector binds
 * 127.0.0.1: listening on other addresses must be asked for explicitly. Throws a one-line Error.
 */
export function parseListen(s: string): { host: string; port: number } {
  const t = s.trim();
  let host = DEFAULT_BIND, portText = t;
  const v6 = /^\[([^\]]+)\]:(\d+)$/.exec(t);
  if (v6) { host = v6[1]!; portText = v6[2]!; }
  else if (t.includes(':')) {
    const i = t.lastIndexOf(':');
    if (i > 0) host = t.slice(0, i);
    portText = t.slice(i + 1);
  }
  const port = Number(portText);
  if (!/^\d+$/.test(portText) || port > 65535) throw new Error(`listen address ${JSON.stringify(s)}: expected HOST:PORT`);
  return { host, port };
}

function remoteName(address: string, port: number): string {
  return isIPv6(address) ? `[${address}]:${port}` : `${address}:${port}`;
}

interface Exporter {
  name: string;
  transport: 'udp' | 'tcp';
  dec: ExporterDecoder;
  session: ExportSession;
  datagrams: number;
}

/**
 * Starts UDP (IPFIX, NetFlow v9) and TCP (IPFIX, framed by the message Length; RFC 7011 section 10.4)
 * listeners. Templates are scoped per transport session: per exporter address and port for UDP, per
 * connection for TCP (RFC 7011 section 8). One template budget is shared by all sessions.
 */
export async function startCollector(listen: CollectorListen, sink: FlowSink, onProblem?: (p: InputProblem) => void, caps: CollectorCaps = {}): Promise<CollectorHandle> {
  const maxExporters = caps.maxExporters ?? MAX_EXPORTERS;
  const maxDatagram = caps.maxDatagramBytes ?? MAX_DATAGRAM_BYTES;
  const budget = new TemplateBudget();
  const exporters = new Map<string, Exporter>();
  const closed: Exporter[] = [];
  const conns = new Set<TcpSocket>();
  const sockets: Socket[] = [];
  let server: Server | undefined;
  let overCap = 0, datagramsOverCap = 0;
  const addrs: CollectorAddresses = {};

  const exporter = (key: string, format: ExportFormat, transport: Exporter['transport']): Exporter | null => {
    let e = exporters.get(key);
    if (e) return e;
    if (exporters.size >= maxExporters) { overCap++; return null; }
    const name = key.slice(key.indexOf(' ') + 1);
    const dec = new ExporterDecoder(format, name, name, sink, budget, onProblem);
    e = { name, transport, dec, session: dec.session, datagrams: 0 };
    exporters.set(key, e);
    return e;
  };

  const udp = async (spec: string, listening: 'ipfix' | 'netflow9'): Promise<AddressInfo> => {
    const { host, port } = parseListen(spec);
    // a large receive buffer rides out scheduling gaps (the default holds about 90 datagrams); the
    // kernel caps it at net.core.rmem_max
    const sock = createSocket({ type: isIPv6(host) ? 'udp6' : 'udp4', recvBufferSize: UDP_RECEIVE_BUFFER });
    sock.on('message', (msg: Buffer, r: RemoteInfo) => {
      if (msg.length > maxDatagram) { datagramsOverCap++; return; }
      // the NetFlow port takes v5 as well as v9: the datagram's version word says which
      const format: ExportFormat = listening === 'netflow9' && msg.length >= 2 && msg[0] === 0 && msg[1] === V5_VERSION ? 'netflow5' : listening;
      const e = exporter(`${format} ${remoteName(r.address, r.port)}`, format, 'udp');
      if (!e) return;
      e.datagrams++;
      e.dec.datagram(msg, 0, msg.length, 0);
    });
    await new Promise<void>((resolve, reject) => {
      sock.once('error', reject);
      sock.bind(port, host, () => { sock.off('error', reject); resolve(); });
    });
    sock.on('error', (err) => onProblem?.({ file: spec, offset: -1, reason: 'socket-error', message: err.message, fatal: false }));
    sockets.push(sock);
    return sock.address();
  };

  const tcp = async (spec: string): Promise<AddressInfo> => {
    const { host, port } = parseListen(spec);
    server = createServer((c) => {
      const e = exporter(`tcp ${remoteName(c.remoteAddress ?? '?', c.remotePort ?? 0)}`, 'ipfix', 'tcp');
      if (!e) { c.destroy(); return; }
      conns.add(c);
      c.on('error', () => {}); // a reset connection ends like a closed one
      const src = new StreamSource(e.name, c);
      void driveFrames(src, ipfixFileStep(e.dec.ipfix!)).then((tail) => {
        if (tail > 0) e.session.problem('truncated', -1, `connection ended inside an IPFIX message (${tail} bytes left)`);
      }, (err: Error) => {
        e.session.problem('connection-error', -1, `connection failed: ${err.message}`);
      }).finally(() => {
        conns.delete(c);
        e.session.finish();
        e.session.release();
        exporters.delete(`tcp ${e.name}`);
        closed.push(e);
      });
    });
    await new Promise<void>((resolve, reject) => {
      server!.once('error', reject);
      server!.listen(port, host, () => { server!.off('error', reject); resolve(); });
    });
    return server.address() as AddressInfo;
  };

  try {
    if (listen.ipfixUdp) addrs.ipfixUdp = await udp(listen.ipfixUdp, 'ipfix');
    if (listen.ipfixTcp) addrs.ipfixTcp = await tcp(listen.ipfixTcp);
    if (listen.netflowUdp) addrs.netflowUdp = await udp(listen.netflowUdp, 'netflow9');
  } catch (err) {
    for (const s of sockets) s.close();
    server?.close();
    throw new Error(`cannot listen: ${(err as Error).message}`);
  }

  const stats = (): CollectorStats => {
    const list: ExporterStats[] = [];
    for (const e of [...closed, ...exporters.values()]) {
      const c = e.session.counters;
      list.push({
        exporter: e.name, format: e.dec.format, transport: e.transport, datagrams: e.datagrams, messages: c.messages,
        records: c.records, flows: c.flows, malformed: c.problems.total, unknownTemplate: c.unknownTemplateSets,
        sequenceLost: c.sequenceLost, templatesOverCap: c.templatesOverCap, pendingOverCap: c.pendingOverCap,
      });
    }
    const sum = (k: keyof ExporterCounts) =>
      list.reduce((a, x) => a + x[k], 0);
    return {
      datagrams: sum('datagrams'), messages: sum('messages'), records: sum('records'), flows: sum('flows'),
      malformed: sum('malformed'), unknownTemplate: sum('unknownTemplate'), sequenceLost: sum('sequenceLost'),
      templatesOverCap: sum('templatesOverCap'), pendingOverCap: sum('pendingOverCap'),
      exportersOverCap: overCap, datagramsOverCap, exporters: list,
    };
  };

  const close = async (): Promise<void> => {
    await Promise.all(sockets.map((s) => new Promise<void>((r) => s.close(() => r()))));
    for (const c of conns) c.destroy();
    if (server) await new Promise<void>((r) => server!.close(() => r()));
    for (const e of exporters.values()) e.session.finish();
  };

  return { close, stats, addresses: () => ({ ...addrs }) };
}
