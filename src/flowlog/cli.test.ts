import { spawn, spawnSync } from 'node:child_process';
import { createSocket } from 'node:dgram';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import type { FlowRecord } from '../flow/record.js';

// `tidewatch flows --ipfix-listen`: the scapy-made golden messages (test/golden/make_flowlog_goldens.py)
// sent over loopback UDP come out as the golden records, labelled ADDR:PORT/ODID.
const root = join(import.meta.dirname, '..', '..');
const golden = join(root, 'test', 'golden', 'flowlog');
const cli = join(root, 'dist', 'src', 'cli', 'main.js');

beforeAll(() => {
  spawnSync('npx', ['tsc', '-p', 'tsconfig.json'], { cwd: root, stdio: 'ignore' }); // emits despite others' type errors
}, 120_000);

describe('tidewatch flows --ipfix-listen', () => {
  it('prints records received over UDP, stops at SIGTERM and prints the collector summary', async () => {
    const file = new Uint8Array(readFileSync(join(golden, 'ipfix_mixed.ipfix')));
    const want = JSON.parse(readFileSync(join(golden, 'ipfix_mixed.ipfix.expected.json'), 'utf8')) as FlowRecord[];
    const child = spawn(process.execPath, [cli, 'flows', '--ipfix-listen', '127.0.0.1:0', '--duration', '20'], { stdio: ['ignore', 'pipe', 'pipe'] });
    let out = '', err = '';
    child.stdout.on('data', (d: Buffer) => { out += d.toString(); });
    const port = await new Promise<number>((resolve, reject) => {
      child.stderr.on('data', (d: Buffer) => {
        err += d.toString();
        const m = /ipfix\/udp 127\.0\.0\.1:(\d+)/.exec(err);
        if (m) resolve(Number(m[1]));
      });
      child.once('exit', () => reject(new Error(`flows exited early: ${err}`)));
    });
    const udp = createSocket('udp4');
    await new Promise<void>((r) => udp.bind(0, '127.0.0.1', () => r()));
    for (let p = 0; p < file.length; ) {
      const len = (file[p + 2]! << 8) | file[p + 3]!;
      await new Promise<void>((r, j) => udp.send(file.subarray(p, p + len), port, '127.0.0.1', (e) => (e ? j(e) : r())));
      p += len;
    }
    const me = `127.0.0.1:${udp.address().port}`;
    udp.close();
    await new Promise((r) => setTimeout(r, 300));
    const exited = new Promise<number | null>((r) => child.once('exit', (code) => r(code)));
    child.kill('SIGTERM');
    expect(await exited).toBe(0);
    const got = out.split('\n').filter((l) => l).map((l) => JSON.parse(l) as FlowRecord);
    expect(got).toEqual(want.map((r) => ({ ...r, exporter: me + r.exporter.slice(r.exporter.lastIndexOf('/')) })));
    expect(err).toMatch(new RegExp(`collector: ${want.length} flows from 1 exporters`));
  });
});
