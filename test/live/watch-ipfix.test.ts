import { createSocket } from 'node:dgram';
import { connect } from 'node:net';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import type { FlowRecord } from '../../src/flow/record.js';
import { ingestInput } from '../../src/ingest/index.js';
import { DEFAULT_INGEST } from '../../src/ingest/types.js';
import { parseAlertLines, scoreAlerts } from '../../src/scenario/eval.js';
import type { Truth } from '../../src/scenario/truth.js';
import { SYSLOG_SEVERITY } from '../../src/sink/syslog.js';
import type { Alert } from '../../src/alert/alert.js';
import { encodeIpfix } from './ipfix-encode.js';
import { DEMO_PCAP, DEMO_TRUTH, octetCountedFrames, parse5424, readStatus, sleep, startCli, syslogReceiver, waitFor } from './helpers.js';

// Acceptance of issue 6 on loopback: the bundled generated incident capture (captures/larkspur-demo.pcap,
// the incident scenario shortened to one hour: src/scenario/make-demo.ts) turned into flow records,
// sent as IPFIX over UDP to `watch --ipfix-listen 127.0.0.1:0` at a bounded rate, with a syslog TCP
// receiver. Event time comes from the data and runs about 1000x faster than the wall clock here;
// SIGTERM closes the last windows.
const dir = mkdtempSync(join(tmpdir(), 'tidewatch-live-ipfix-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('watch --ipfix-listen with --syslog tcp:// and udp://', () => {
  it('alerts reach stdout and the syslog receivers within two windows of each episode start; frames parse', async () => {
    const truth = JSON.parse(readFileSync(DEMO_TRUTH, 'utf8')) as Truth;
    const records: FlowRecord[] = [];
    await ingestInput(DEMO_PCAP, (r) => { records.push(r); }, { ...DEFAULT_INGEST });
    // templates once: a TCP session keeps them for its lifetime (RFC 7011 section 8.1)
    const messages = encodeIpfix(records, { templateEvery: Number.MAX_SAFE_INTEGER });
    const receiver = await syslogReceiver();
    // and a UDP receiver: one message per datagram (RFC 5426 section 3.1)
    const udp = createSocket('udp4');
    const datagrams: Buffer[] = [];
    udp.on('message', (m) => datagrams.push(m));
    await new Promise<void>((r) => udp.bind(0, '127.0.0.1', () => r()));
    const status = join(dir, 'status.json');
    const w = startCli(['watch', '--ipfix-listen', '127.0.0.1:0', '--syslog', `tcp://127.0.0.1:${receiver.port}`,
      '--syslog', `udp://127.0.0.1:${udp.address().port}`,
      '--status-json', status, '--status-interval', '200ms', '--internal', truth.inside.join(','), '--sensor', 'live-test']);
    try {
      // IPFIX over TCP (RFC 7011 section 10.4): the same listener as UDP, and no loss on a loaded machine,
      // where a UDP receive buffer overflows whenever the receiver is descheduled (the load bench measures UDP)
      const port = Number((await waitFor('the bound port', () => readStatus(status)?.listening.ipfix_tcp)).split(':').pop());
      const sock = connect({ host: '127.0.0.1', port });
      await new Promise<void>((r) => sock.once('connect', () => r()));
      // bounded rate: 8 messages (about 170 records) every 10 ms, at most about 17 k records/s
      for (let i = 0; i < messages.length; i += 8) {
        if (!sock.write(Buffer.concat(messages.slice(i, i + 8)))) await new Promise((r) => sock.once('drain', r));
        await sleep(10);
      }
      await new Promise<void>((r) => sock.end(() => r()));
      const sent = records.length;
      const got = await waitFor('every record at the collector', () => {
        const s = readStatus(status);
        return s && s.sources.collector!.records === sent ? s : null;
      }).catch((e: Error) => { throw new Error(`${e.message}: sent ${sent}, status ${JSON.stringify(readStatus(status))}`); });
      expect(got.drops.sequence_lost).toBe(0);
      // before any signal: the episodes' alerts already came out while the data flowed
      const before = await waitFor('syslog caught up with stdout', () => {
        const n = w.stdout().split('\n').filter(Boolean).length;
        return n > 0 && octetCountedFrames(receiver.bytes()).length === n ? w.stdout() : null;
      });
      for (const e of scoreAlerts(truth, parseAlertLines(before, 'stdout').alerts).episodes) {
        expect(e.detected, `${e.id} out before SIGTERM`).toBe(true);
      }
      w.child.kill('SIGTERM');
      expect(await w.exited).toBe(0);
    } finally {
      w.child.kill('SIGKILL');
    }
    await sleep(100);
    await receiver.close();
    udp.close();

    const lines = w.stdout().trim().split('\n');
    const feed = parseAlertLines(lines.join('\n'), 'stdout');
    const r = scoreAlerts(truth, feed.alerts);
    for (const e of r.episodes) {
      expect(e.detected, `${e.id} detected`).toBe(true);
      // within two windows of the episode's start, in event time (alert start against the truth)
      expect(e.delay_s!, `${e.id} within two windows`).toBeLessThanOrEqual(120);
    }
    // the receiver got the same lines, in order, each in an RFC 5424 message framed by octet counting
    const frames = octetCountedFrames(receiver.bytes());
    expect(frames.length).toBe(lines.length);
    frames.forEach((f, i) => {
      const m = parse5424(f);
      const a = JSON.parse(m.msg) as Alert;
      expect(m.msg).toBe(lines[i]);
      expect(m.version).toBe(1); // RFC 5424 section 6.2.2
      expect(m.pri).toBe(16 * 8 + SYSLOG_SEVERITY[a.severity]); // PRI = facility * 8 + severity (section 6.2.1), local0
      expect(m.app).toBe('tidewatch');
      expect(m.msgid).toBe(a.kind);
      expect(m.timestamp).toMatch(/^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d(\.\d{1,6})?(Z|[+-]\d\d:\d\d)$/); // section 6.2.3
    });
    expect(datagrams.map((d) => parse5424(d).msg)).toEqual(lines);
    const final = readStatus(join(dir, 'status.json'))!;
    expect(final.final).toBe(true);
    expect(final.alerts).toBeGreaterThan(0);
    expect(final.syslog.map((t) => t.dropped)).toEqual([0, 0]);
  }, 60_000);
});
