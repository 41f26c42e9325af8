import { createSocket, type Socket as UdpSocket } from 'node:dgram';
import { connect, isIPv6, type Socket } from 'node:net';
import { hostname as osHostname } from 'node:os';
import type { Alert, Severity } from '../alert/alert.js';
import { alertToJson, jsonNumber } from '../alert/serialize.js';
import { rfc3339 } from '../util/time.js';

/** Alert severity to syslog severity (RFC 5424 section 6.2.1; mapping is ours, METHODS 8.1). */
export const SYSLOG_SEVERITY: Record<Severity, number> = { critical: 2, high: 3, medium: 4, low: 5 };
export const FACILITY_LOCAL0 = 16;
/** Private SD-ID under the documentation enterprise number 32473 (RFC 5612); a real PEN belongs here in production. */
export const SD_ID = 'tidewatch@32473';
const APP_NAME = 'tidewatch';
const BOM = Buffer.from([0xef, 0xbb, 0xbf]);

export interface SyslogFormatOptions {
  /** 0..23; default local0 (16). */
  facility?: number;
  /** Default os.hostname(). */
  hostname?: string;
  /** Default the process id. */
  procid?: string;
}

/** PRIVAL = facility * 8 + severity (RFC 5424 section 6.2.1). */
export function syslogPri(facility: number, severity: number): number {
  if (!Number.isInteger(facility) || facility < 0 || facility > 23) throw new RangeError(`syslog facility ${facility} is not 0..23`);
  if (!Number.isInteger(severity) || severity < 0 || severity > 7) throw new RangeError(`syslog severity ${severity} is not 0..7`);
  return facility * 8 + severity;
}

/**
 * One RFC 5424 message: `<PRI>1 TIMESTAMP HOSTNAME tidewatch PROCID MSGID [tidewatch@32473 kind host
 * score] BOM+alert JSON`. MSGID is the alert kind. Header fields are cut to their RFC lengths and to
 * printable US-ASCII (33-126); `-` stands in for an empty one.
 */
export function formatSyslog(a: Alert, timestampMs: number, opts: SyslogFormatOptions = {}): Buffer {
  const pri = syslogPri(opts.facility ?? FACILITY_LOCAL0, SYSLOG_SEVERITY[a.severity]);
  const header = [
    `<${pri}>1`,
    rfc3339(timestampMs),
    headerField(opts.hostname ?? osHostname(), 255),
    APP_NAME,
    headerField(opts.procid ?? String(process.pid), 128),
    headerField(a.kind, 32),
  ].join(' ');
  const sd = `[${SD_ID} kind="${sdValue(a.kind)}" host="${sdValue(a.host)}" score="${jsonNumber(a.score, 2)}"]`;
  return Buffer.concat([Buffer.from(`${header} ${sd} `), BOM, Buffer.from(alertToJson(a))]);
}

/** Octet-counting frame `MSG-LEN SP SYSLOG-MSG` (RFC 6587 section 3.4.1; the same as RFC 5425). */
export function frameOctetCounted(msg: Buffer): Buffer {
  return Buffer.concat([Buffer.from(`${msg.length} `), msg]);
}

function headerField(s: string, max: number): string {
  return s.replace(/[^\x21-\x7e]/g, '').slice(0, max) || '-';
}

/** PARAM-VALUE escapes `"`, `\` and `]` (RFC 5424 section 6.3.3). */
function sdValue(s: string): string {
  return s.replace(/["\\\]]/g, (c) => `\\${c}`);
}

export interface SyslogTarget { transport: 'udp' | 'tcp'; host: string; port: number }

/** `udp://HOST:PORT` or `tcp://HOST:PORT` (IPv6 in brackets); throws RangeError with a usage message. */
export function parseSyslogTarget(url: string): SyslogTarget {
  const m = /^(udp|tcp):\/\/(\[[0-9a-fA-F:.]+\]|[^:/[\]]+):(\d{1,5})$/.exec(url);
  const port = m ? Number(m[3]) : NaN;
  if (!m || port < 1 || port > 65535) throw new RangeError(`syslog target "${url}" is not udp://HOST:PORT or tcp://HOST:PORT`);
  return { transport: m[1] as 'udp' | 'tcp', host: m[2]!.replace(/^\[|\]$/g, ''), port };
}

export interface SyslogSinkOptions extends SyslogFormatOptions {
  /** Messages waiting (TCP) or in flight (UDP) before new ones are dropped. Default 1000. */
  maxQueue?: number;
  /** Reconnect delay, doubling from min to max (TCP). Defaults 100 ms and 30 s. */
  backoffMinMs?: number;
  backoffMaxMs?: number;
  /** Time source for the TIMESTAMP field. Default Date.now. */
  clock?: () => number;
}

export interface SyslogStats {
  /** Messages handed to the operating system. */
  sent: number;
  /** Messages given up: queue full, send error, or still queued when close() timed out. */
  dropped: number;
  reconnects: number;
  errors: number;
}

export interface SyslogSink {
  send(a: Alert): void;
  /** Sends what it can within `timeoutMs` (default 2000), then lets go of the socket. */
  close(timeoutMs?: number): Promise<void>;
  readonly stats: SyslogStats;
}

export function openSyslogSink(url: string, opts: SyslogSinkOptions = {}): SyslogSink {
  const t = parseSyslogTarget(url);
  return t.transport === 'udp' ? new UdpSyslogSink(t, opts) : new TcpSyslogSink(t, opts);
}

const newStats = (): SyslogStats => ({ sent: 0, dropped: 0, reconnects: 0, errors: 0 });

/** One message per datagram (RFC 5426). Datagrams in flight are bounded; beyond that they are dropped. */
export class UdpSyslogSink implements SyslogSink {
  readonly stats = newStats();
  private readonly socket: UdpSocket;
  private inFlight = 0;
  private readonly maxQueue: number;
  private onIdle: (() => void) | undefined;

  constructor(private readonly target: Omit<SyslogTarget, 'transport'>, private readonly opts: SyslogSinkOptions = {}) {
    this.maxQueue = opts.maxQueue ?? 1000;
    this.socket = createSocket(isIPv6(target.host) ? 'udp6' : 'udp4');
    this.socket.on('error', () => this.stats.errors++);
  }

  send(a: Alert): void {
    if (this.inFlight >= this.maxQueue) {
      this.stats.dropped++;
      return;
    }
    const msg = formatSyslog(a, (this.opts.clock ?? Date.now)(), this.opts);
    this.inFlight++;
    this.socket.send(msg, this.target.port, this.target.host, (e) => {
      this.inFlight--;
      if (e) {
        this.stats.errors++;
        this.stats.dropped++;
      } else {
        this.stats.sent++;
      }
      if (this.inFlight === 0) this.onIdle?.();
    });
  }

  async close(timeoutMs = 2000): Promise<void> {
    if (this.inFlight > 0) await untilOrTimeout((done) => (this.onIdle = done), timeoutMs);
    this.stats.dropped += this.inFlight;
    await new Promise<void>((r) => this.socket.close(() => r()));
  }
}

/**
 * Octet-counted frames over TCP (RFC 6587 section 3.4.1). Reconnects with doubling backoff; frames
 * wait in a bounded queue while the connection is down or the socket asks for a pause. Frames already
 * written to a connection that then breaks are not resent (the kernel took them; TCP gives no receipt).
 */
export class TcpSyslogSink implements SyslogSink {
  readonly stats = newStats();
  private socket: Socket | undefined;
  private connected = false;
  private waitingDrain = false;
  private closing = false;
  private readonly queue: Buffer[] = [];
  private readonly maxQueue: number;
  private backoffMs: number;
  private reconnectTimer: NodeJS.Timeout | undefined;
  private onIdle: (() => void) | undefined;

  constructor(private readonly target: Omit<SyslogTarget, 'transport'>, private readonly opts: SyslogSinkOptions = {}) {
    this.maxQueue = opts.maxQueue ?? 1000;
    this.backoffMs = opts.backoffMinMs ?? 100;
    this.connect();
  }

  send(a: Alert): void {
    if (this.queue.length >= this.maxQueue) {
      this.stats.dropped++;
      return;
    }
    this.queue.push(frameOctetCounted(formatSyslog(a, (this.opts.clock ?? Date.now)(), this.opts)));
    this.pump();
  }

  async close(timeoutMs = 2000): Promise<void> {
    const deadline = Date.now() + timeoutMs;
    if (!this.isIdle()) await untilOrTimeout((done) => (this.onIdle = done), timeoutMs);
    this.closing = true;
    clearTimeout(this.reconnectTimer);
    this.stats.dropped += this.queue.length;
    this.queue.length = 0;
    const s = this.socket;
    if (!s) return;
    await untilOrTimeout((done) => {
      s.once('close', done);
      s.end();
    }, Math.max(0, deadline - Date.now()));
    s.destroy();
  }

  private connect(): void {
    const s = connect({ host: this.target.host, port: this.target.port });
    this.socket = s;
    s.setNoDelay(true);
    s.on('connect', () => {
      this.connected = true;
      this.backoffMs = this.opts.backoffMinMs ?? 100;
      this.pump();
    });
    s.on('drain', () => {
      this.waitingDrain = false;
      this.pump();
    });
    s.on('error', () => this.stats.errors++);
    s.on('close', () => {
      this.connected = false;
      this.waitingDrain = false;
      if (this.socket === s) this.socket = undefined;
      if (!this.closing) this.scheduleReconnect();
    });
  }

  private scheduleReconnect(): void {
    this.reconnectTimer = setTimeout(() => {
      this.stats.reconnects++;
      this.connect();
    }, this.backoffMs);
    this.reconnectTimer.unref();
    this.backoffMs = Math.min(this.backoffMs * 2, this.opts.backoffMaxMs ?? 30_000);
  }

  private pump(): void {
    while (this.connected && !this.waitingDrain && this.queue.length > 0) {
      const frame = this.queue.shift()!;
      this.stats.sent++;
      if (!this.socket!.write(frame)) this.waitingDrain = true;
    }
    if (this.isIdle()) this.onIdle?.();
  }

  private isIdle(): boolean {
    return this.queue.length === 0 && !this.waitingDrain;
  }
}

/** Resolves when `arm`'s callback fires or after `ms`, whichever comes first. */
function untilOrTimeout(arm: (done: () => void) => void, ms: number): Promise<void> {
  return new Promise<void>((resolve) => {
    const timer = setTimeout(resolve, ms);
    arm(() => {
      clearTimeout(timer);
      resolve();
    });
  });
}
