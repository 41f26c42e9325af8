// Runs the compiled CLI: build first (`npx tsc -p tsconfig.json`; `npm test` does it).
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';

const ROOT = fileURLToPath(new URL('../..', import.meta.url));
const CLI = join(ROOT, 'dist/src/cli/main.js');
const BUNDLED = join(ROOT, 'captures/larkspur-demo.pcap');
const INSIDE = (JSON.parse(readFileSync(BUNDLED.replace(/\.pcap$/, '.truth.json'), 'utf8')) as { inside: string[] }).inside.join(',');
const dir = mkdtempSync(join(tmpdir(), 'tidewatch-report-cli-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** A written page without its "made at" time. */
const page = (f: string) => readFileSync(join(dir, f), 'utf8').replace(/made [^.]* UTC\./, '');

function run(...args: string[]) {
  const r = spawnSync(process.execPath, [CLI, ...args], { encoding: 'utf8' });
  return { code: r.status, out: r.stdout, err: r.stderr };
}

describe('tidewatch report', () => {
  const alerts = join(dir, 'alerts.jsonl');

  it('from an alerts file plus the input: a page with every alerted host', () => {
    const replay = run('replay', BUNDLED, '--internal', INSIDE, '--quiet', '--out', alerts);
    expect(replay.code).toBe(0);
    const hosts = new Set(readFileSync(alerts, 'utf8').trim().split('\n').map((l) => (JSON.parse(l) as { host: string }).host));
    const out = join(dir, 'a.html');
    const r = run('report', alerts, '--input', BUNDLED, '--internal', INSIDE, '--out', out, '--title', 'T');
    expect(r.code).toBe(0);
    expect(r.err).toMatch(/^wrote .*a\.html \(\d+ KiB\): \d+ alerts on \d+ hosts, \d+ charts$/m);
    expect(r.err).not.toContain('note:'); // the same options: every alert raised again
    const html = readFileSync(out, 'utf8');
    for (const h of hosts) expect(html).toContain(`<h2>${h}</h2>`);
  });

  it('without an alerts file replays first; the page matches the one made from the file', () => {
    const b = run('report', '--input', BUNDLED, '--internal', INSIDE, '--out', join(dir, 'b.html'), '--quiet', '--title', 'T');
    expect([b.code, b.err]).toEqual([0, '']);
    expect(page('b.html')).toBe(page('a.html'));
  });

  it('other options than the alerts were made with: a note says the alerts were not raised again', () => {
    const r = run('report', alerts, '--input', BUNDLED, '--internal', INSIDE, '--alpha', '0.00001', '--out', join(dir, 'd.html'));
    expect(r.code).toBe(0);
    expect(r.err).toMatch(/note: \d+ of \d+ alerts were not raised again/);
    expect(readFileSync(join(dir, 'd.html'), 'utf8')).toContain('class="note"');
  });

  it('--state DB: the alerts stored by replay --state give the same page as the alerts file', () => {
    const db = join(dir, 'state.db');
    expect(run('replay', BUNDLED, '--internal', INSIDE, '--quiet', '--state', db).code).toBe(0);
    const s = run('report', '--state', db, '--input', BUNDLED, '--internal', INSIDE, '--out', join(dir, 's.html'), '--quiet', '--title', 'T');
    expect([s.code, s.err]).toEqual([0, '']);
    expect(page('s.html')).toBe(page('a.html'));
    expect(run('report', alerts, '--state', db, '--input', BUNDLED, '--out', join(dir, 'u.html')).code).toBe(2); // one source of alerts
  });

  it('bad alert lines are reported with their line and skipped', () => {
    const bad = join(dir, 'bad.jsonl');
    writeFileSync(bad, `not json\n${readFileSync(alerts, 'utf8')}`);
    const r = run('report', bad, '--input', BUNDLED, '--internal', INSIDE, '--out', join(dir, 'e.html'));
    expect(r.code).toBe(0);
    expect(r.err).toContain('bad.jsonl: line 1: not JSON');
  });

  it('usage and input errors exit 2 and 3', () => {
    expect(run('report', '--input', '-', '--out', join(dir, 'f.html')).code).toBe(2); // stdin cannot be read twice
    expect(run('report', join(dir, 'missing.jsonl'), '--input', BUNDLED, '--out', join(dir, 'g.html')).code).toBe(3);
    expect(run('report', alerts, '--input', join(dir, 'missing.pcap'), '--out', join(dir, 'h.html')).code).toBe(3);
    expect(run('report', alerts, '--out', join(dir, 'i.html')).code).toBe(2); // --input is required
  });
});
