/**
 * Fault tests: each names what it simulates. The sensor must print one clear line, keep running where
 * it can, and lose no alert it reported as written. Simulations: a file-size limit (`ulimit -f`, with
 * SIGXFSZ ignored so writes fail with EFBIG, POSIX setrlimit RLIMIT_FSIZE), a full tmpfs (ENOSPC), a
 * read-only tmpfs (EROFS), a second SQLite connection holding BEGIN EXCLUSIVE (SQLite "File Locking
 * And Concurrency"), and a TCP syslog receiver that closes and comes back (RFC 6587 framing).
 */
import { execFile, execFileSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { createServer, type Server, type Socket } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { TcpSyslogSink } from '../../src/sink/syslog.js';
import { CLI, DEMO, DEMO_INSIDE, alertFixture, cli, type Run } from './helpers.js';

const work = mkdtempSync(join(tmpdir(), 'tw-faults-'));
afterAll(() => rmSync(work, { recursive: true, force: true }));

/** `replay` of the demo capture in a shell with a file-size limit of `kib` KiB. */
function replayLimited(kib: number, extra: string[]): Promise<Run> {
  const args = [CLI, 'replay', DEMO, '--internal', DEMO_INSIDE, '--format', 'jsonl', ...extra].map((a) => `'${a}'`).join(' ');
  return new Promise((resolve) => {
    execFile('bash', ['-c', `trap '' XFSZ; ulimit -f ${kib}; exec '${process.execPath}' ${args}`], { maxBuffer: 64 << 20 },
      (err, stdout, stderr) => resolve({ code: err ? (typeof err.code === 'number' ? err.code : null) : 0, stdout, stderr }));
  });
}

const lines = (s: string) => s.split('\n').filter((l) => l !== '');
const failureLines = (stderr: string) => lines(stderr).filter((l) => l.includes('write failed'));

/** Mounts a tmpfs (root only); null when this machine does not allow it. */
function tmpfs(dir: string, opts: string): boolean {
  mkdirSync(dir, { recursive: true });
  try {
    execFileSync('mount', ['-t', 'tmpfs', '-o', opts, 'tmpfs', dir], { stdio: 'ignore' });
    return true;
  } catch {
    return false;
  }
}
function unmount(dir: string): void {
  try { execFileSync('umount', [dir], { stdio: 'ignore' }); } catch { /* not mounted */ }
}

describe('faults', () => {
  let full = join(work, 'full'), ro = join(work, 'ro');
  let mounted = false;
  /** The demo capture's whole feed without any fault: what each faulty run must still deliver. */
  let whole = { lines: 0, opens: 0 };
  beforeAll(async () => {
    const r = await cli(['replay', DEMO, '--internal', DEMO_INSIDE, '--format', 'jsonl', '--quiet']);
    const feed = lines(r.stdout);
    whole = { lines: feed.length, opens: feed.filter((l) => l.includes('"state":"open"')).length };
  });
  beforeAll(() => {
    mounted = tmpfs(full, 'size=256k') && tmpfs(ro, 'ro,size=64k');
    if (!mounted) { unmount(full); unmount(ro); full = ''; ro = ''; }
  });
  afterAll(() => { unmount(full); unmount(ro); });

  it('disk full while writing alerts (file-size limit on --out): one line, run goes on, the file holds whole lines it reported', async () => {
    const out = join(work, 'alerts.jsonl');
    const r = await replayLimited(8, ['--out', out]);
    expect(r.code).toBe(0);
    const fail = failureLines(r.stderr);
    expect(fail).toHaveLength(1);
    expect(fail[0]).toMatch(/^tidewatch: .*alerts\.jsonl: write failed \(EFBIG: file too large\); (\d+) lines are in the file, whole; /);
    const reported = Number(/; (\d+) lines are in the file/.exec(fail[0]!)![1]);
    const file = readFileSync(out, 'utf8');
    expect(file.endsWith('\n')).toBe(true);
    const stdout = lines(r.stdout);
    expect(lines(file)).toEqual(stdout.slice(0, reported)); // what it said it wrote is there, whole
    expect(stdout.length).toBeGreaterThan(reported); // the feed kept going on stdout
    expect(r.stderr).toMatch(new RegExp(`alerts ${whole.opens} `));
  });

  it('disk full while writing state (file-size limit on --state): one line, feed complete, stored lines as reported, file sound', async () => {
    const db = join(work, 'limited.db');
    const r = await replayLimited(1000, ['--state', db]);
    expect(r.code).toBe(0);
    const fail = failureLines(r.stderr);
    expect(fail).toHaveLength(1);
    expect(fail[0]).toMatch(/^tidewatch: --state .*limited\.db: write failed \(SQLITE_\w+: [^)]+\); alerts continue on the outputs; (\d+) lines/);
    const reported = Number(/; (\d+) lines of this run were stored/.exec(fail[0]!)![1]);
    const feed = lines(r.stdout);
    expect(feed.length).toBe(whole.lines); // the demo capture's feed, whole
    const d = new Database(db, { readonly: true });
    const stored = d.prepare('SELECT json FROM alerts ORDER BY rowid').all() as { json: string }[];
    expect(d.pragma('integrity_check', { simple: true })).toBe('ok');
    d.close();
    expect(stored.length).toBe(reported);
    for (const s of stored) expect(feed).toContain(s.json);
    expect(r.stderr).toMatch(/WRITE FAILED .*checkpoint not written/);
  });

  it('disk full on a tmpfs (ENOSPC on --state): SQLITE_FULL said in one line, the feed complete', async ({ skip }) => {
    if (!mounted) skip();
    const r = await cli(['replay', DEMO, '--internal', DEMO_INSIDE, '--format', 'jsonl', '--state', join(full, 's.db')]);
    expect(r.code).toBe(0);
    expect(failureLines(r.stderr)).toEqual([expect.stringMatching(/write failed \(SQLITE_FULL: database or disk is full\)/)]);
    expect(lines(r.stdout)).toHaveLength(whole.lines);
  });

  it('a read-only output path (read-only tmpfs): --out and --state are refused up front in one line, exit 2', async ({ skip }) => {
    if (!mounted) skip();
    const a = await cli(['replay', DEMO, '--out', join(ro, 'a.jsonl')]);
    expect(a.code).toBe(2);
    expect(lines(a.stderr)).toEqual([expect.stringMatching(/^tidewatch: --out .*a\.jsonl: cannot open \(EROFS\)$/)]);
    const s = await cli(['replay', DEMO, '--state', join(ro, 's.db')]);
    expect(s.code).toBe(2);
    expect(lines(s.stderr)).toHaveLength(1);
    expect(s.stderr).toMatch(/^tidewatch: --state: .*s\.db: cannot create \(EROFS\)$/m);
  });

  it('the state file locked by another process (BEGIN EXCLUSIVE from a second connection): one line, the feed goes on', async () => {
    const db = join(work, 'locked.db');
    const first = await cli(['replay', DEMO, '--internal', DEMO_INSIDE, '--format', 'jsonl', '--state', db]);
    expect(first.code).toBe(0);
    const holder = new Database(db);
    holder.exec('BEGIN EXCLUSIVE');
    holder.prepare("INSERT OR REPLACE INTO run_state (key, value) VALUES ('lock-test', x'00')").run();
    try {
      // the same capture again: every window is already closed in the state, so only the writes matter
      const r = await cli(['replay', DEMO, '--internal', DEMO_INSIDE, '--format', 'jsonl', '--state', db], { timeoutMs: 30_000 });
      expect(r.code).toBe(0);
      expect(failureLines(r.stderr)).toEqual([expect.stringMatching(/--state .*locked\.db: write failed \(SQLITE_BUSY: database is locked\)/)]);
    } finally {
      holder.exec('ROLLBACK');
      holder.close();
    }
    const d = new Database(db, { readonly: true });
    expect((d.prepare('SELECT count(*) AS n FROM alerts').get() as { n: number }).n).toBe(whole.lines);
    d.close();
  });

  it('the syslog receiver going away and coming back (TCP): queued lines are delivered after the reconnect, none twice', async () => {
    const got: string[] = [];
    let conn: Socket | null = null;
    const listen = (port: number) => new Promise<Server>((resolve) => {
      const srv = createServer((c) => {
        conn = c;
        let buf = Buffer.alloc(0);
        c.on('data', (d) => {
          buf = Buffer.concat([buf, d]);
          for (;;) { // octet counting: LEN SP MSG (RFC 6587 section 3.4.1)
            const sp = buf.indexOf(0x20);
            if (sp < 0) break;
            const n = Number(buf.subarray(0, sp).toString());
            if (buf.length < sp + 1 + n) break;
            got.push(/"id":"([^"]+)"/.exec(buf.subarray(sp + 1, sp + 1 + n).toString())?.[1] ?? '?');
            buf = buf.subarray(sp + 1 + n);
          }
        });
      });
      srv.listen(port, '127.0.0.1', () => resolve(srv));
    });
    let srv = await listen(0);
    const port = (srv.address() as { port: number }).port;
    const sink = new TcpSyslogSink({ host: '127.0.0.1', port }, { backoffMinMs: 20, backoffMaxMs: 100 });
    const until = async (ok: () => boolean) => { for (let i = 0; i < 200 && !ok(); i++) await new Promise((r) => setTimeout(r, 10)); };
    const id = (i: number) => `tw1-${String(i).padStart(16, '0')}`;
    for (let i = 0; i < 3; i++) sink.send(alertFixture({ id: id(i) }));
    await until(() => got.length === 3);
    // the receiver goes away: its connection closes and nothing listens on the port
    await new Promise<void>((r) => { srv.close(() => r()); (conn as Socket | null)?.end(); });
    await new Promise((r) => setTimeout(r, 100));
    for (let i = 3; i < 8; i++) sink.send(alertFixture({ id: id(i) }));
    await new Promise((r) => setTimeout(r, 150));
    srv = await listen(port); // and comes back
    await until(() => got.length === 8);
    await sink.close(1000);
    srv.close();
    expect(got).toEqual(Array.from({ length: 8 }, (_, i) => id(i)));
    expect(sink.stats.sent).toBe(8);
    expect(sink.stats.dropped).toBe(0);
    expect(sink.stats.reconnects).toBeGreaterThan(0);
  });
});
