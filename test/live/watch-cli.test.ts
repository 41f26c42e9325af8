import { spawnSync } from 'node:child_process';
import { createSocket } from 'node:dgram';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { createServer, type AddressInfo } from 'node:net';
import { describe, expect, it } from 'vitest';
import { CLI, readStatus, startCli, waitFor } from './helpers.js';

// Usage and input errors of `watch` (exit codes: src/cli/exit.ts; 2 = usage, 3 = input).
const run = (args: string[], input?: string) => spawnSync(process.execPath, [CLI, 'watch', ...args], { encoding: 'utf8', input, timeout: 15_000 });

describe('watch usage', () => {
  it('needs a source; takes only - as an argument; checks --syslog and listen addresses', () => {
    let r = run([]);
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/watch needs a source/);
    r = run(['capture.pcap']);
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/only from stdin \(-\)/);
    r = run(['-', '--syslog', 'http://192.0.2.1:514']);
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/--syslog: .*udp:\/\/HOST:PORT or tcp:\/\/HOST:PORT/);
    r = run(['--ipfix-listen', '127.0.0.1:99999']);
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/--ipfix-listen/);
  });

  it('a listen address in use is a usage error, nothing runs', async () => {
    const busy = createServer();
    await new Promise<void>((r) => busy.listen(0, '127.0.0.1', () => r()));
    const port = (busy.address() as AddressInfo).port;
    const r = spawnSync(process.execPath, [CLI, 'watch', '--ipfix-listen', `127.0.0.1:${port}`], { encoding: 'utf8', timeout: 15_000 });
    busy.close();
    // UDP binds (a different protocol), the TCP listener on the same port does not
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/cannot listen/);
  });

  it('stdin that is not a capture: the problem on stderr, exit 3', () => {
    const r = run(['-', '--quiet'], '{"not":"a capture"}\n');
    expect(r.status).toBe(3);
    expect(r.stderr).toMatch(/no readable input/);
    const v = run(['-'], '{"not":"a capture"}\n');
    expect(v.stderr).toMatch(/not a pcap or pcapng file/);
  });

  it('a malformed datagram at the listener is reported on stderr and counted in the status (RFC 7011 section 3.1: version 10)', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'tidewatch-live-cli-'));
    const status = join(dir, 'status.json');
    const w = startCli(['watch', '--ipfix-listen', '127.0.0.1:0', '--status-json', status, '--status-interval', '100ms']);
    try {
      const port = Number((await waitFor('the bound port', () => readStatus(status)?.listening.ipfix_udp)).split(':').pop());
      const sock = createSocket('udp4');
      // version 10, but a message length (8) shorter than the 16-octet header
      await new Promise<void>((r) => sock.send(Buffer.from([0, 10, 0, 8, 0, 0, 0, 0]), port, '127.0.0.1', () => r()));
      sock.close();
      await waitFor('the problem counted', () => (readStatus(status)?.drops.malformed ?? 0) >= 1);
      w.child.kill('SIGTERM');
      expect(await w.exited).toBe(0);
      expect(w.stderr()).toMatch(/tidewatch: 127\.0\.0\.1:\d+: /);
    } finally {
      w.child.kill('SIGKILL');
      rmSync(dir, { recursive: true, force: true });
    }
  }, 20_000);
});
