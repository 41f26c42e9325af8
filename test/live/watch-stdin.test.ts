import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { afterAll, describe, expect, it } from 'vitest';
import type { Truth } from '../../src/scenario/truth.js';
import { CLI, DEMO_PCAP, DEMO_TRUTH, readStatus, startCli, trickle, waitFor } from './helpers.js';

// `watch -` on a capture arriving slowly through a pipe (64 KiB chunks with pauses, as a pipe from a
// capture tool delivers them) against `replay` of the same file: the same flow records in the same order
// reach the sensor, so the feed must be the same lines. The capture is the bundled generated one
// (captures/larkspur-demo.pcap, src/scenario/make-demo.ts).
const dir = mkdtempSync(join(tmpdir(), 'tidewatch-live-stdin-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
const truth = JSON.parse(readFileSync(DEMO_TRUTH, 'utf8')) as Truth;
const common = ['--internal', truth.inside.join(','), '--sensor', 'live-test'];
const pcap = readFileSync(DEMO_PCAP);

describe('watch - (capture on stdin)', () => {
  it('a capture piped in chunks with pauses gives the same alerts as replay of the file', async () => {
    const replay = spawnSync(process.execPath, [CLI, 'replay', DEMO_PCAP, '--quiet', ...common], { encoding: 'utf8', maxBuffer: 1 << 26 });
    expect(replay.status).toBe(0);
    const w = startCli(['watch', '-', '--quiet', ...common]);
    // 64 KiB chunks, 20 ms apart: well under the 2 s idleness threshold, so event time is the data's
    await trickle(w.child.stdin!, pcap, 64 * 1024, 20);
    w.child.stdin!.end();
    expect(await w.exited).toBe(0);
    const lines = w.stdout().trim().split('\n');
    const want = replay.stdout.trim().split('\n');
    expect(want.length).toBeGreaterThan(5);
    expect(lines.map((l) => (JSON.parse(l) as { id: string }).id)).toEqual(want.map((l) => (JSON.parse(l) as { id: string }).id));
    expect(lines).toEqual(want);
  }, 30_000);

  it('SIGTERM mid-stream: every alert of a closed window is in the --out file and the state, exit 0', async () => {
    const out = join(dir, 'alerts.jsonl'), db = join(dir, 'state.db'), status = join(dir, 'status.json');
    const w = startCli(['watch', '-', '--quiet', '--out', out, '--state', db, '--status-json', status, '--status-interval', '100ms', ...common]);
    // about two thirds of the capture, then the pipe stays open (a live link, not an end of input)
    await trickle(w.child.stdin!, pcap, 64 * 1024, 5, 0, Math.floor(pcap.length * 0.66));
    await waitFor('windows closing and alerts', () => {
      const s = readStatus(status);
      return s && s.alerts >= 3 && s.windows_closed >= 30;
    });
    w.child.kill('SIGTERM');
    expect(await w.exited).toBe(0);
    const shown = w.stdout().trim().split('\n');
    expect(shown.length).toBeGreaterThan(0);
    // everything emitted, from the windows closed while running and those SIGTERM closed, is on disk
    const file = readFileSync(out, 'utf8').trim().split('\n');
    expect(file).toEqual(shown);
    expect(existsSync(db)).toBe(true);
    const d = new Database(db, { readonly: true });
    try {
      const stored = (d.prepare('SELECT json FROM alerts ORDER BY seq').all() as { json: string }[]).map((r) => r.json);
      expect(stored).toEqual(shown);
      // and the learned state was checkpointed for the next start
      expect((d.prepare('SELECT count(*) AS n FROM run_state').get() as { n: number }).n).toBeGreaterThan(0);
    } finally {
      d.close();
    }
    const final = readStatus(status)!;
    expect(final.final).toBe(true);
    expect(final.sources.stdin!.ended).toBe(false);
  }, 30_000);

  it('a pipe that goes quiet: idleness moves event time on, the flow table and the windows close without an end of input', async () => {
    const status = join(dir, 'idle-status.json');
    const w = startCli(['watch', '-', '--quiet', '--window', '2s', '--idle-after', '300ms', '--status-json', status, '--status-interval', '100ms', ...common]);
    try {
      await trickle(w.child.stdin!, pcap, 64 * 1024, 2, 0, 256 * 1024);
      // every piped packet read: the packet count holds still for half a second
      let last = -1, since = Date.now();
      const s1 = await waitFor('all piped packets read', () => {
        const s = readStatus(status);
        if (!s || s.sources.stdin!.packets !== last) { last = s?.sources.stdin!.packets ?? -1; since = Date.now(); return null; }
        return last > 0 && Date.now() - since >= 500 ? s : null;
      });
      // no more data: within a few seconds the flow table cuts its updates and the windows close
      const s2 = await waitFor('windows closed by idleness', () => {
        const s = readStatus(status);
        return s && s.records > s1.records && s.windows_closed > s1.windows_closed ? s : null;
      }, 10_000);
      expect(s2.sources.stdin!.packets).toBe(s1.sources.stdin!.packets);
      expect(Date.parse(s2.event_time!)).toBeGreaterThan(Date.parse(s1.event_time!));
      w.child.kill('SIGTERM');
      expect(await w.exited).toBe(0);
    } finally {
      w.child.kill('SIGKILL');
    }
  }, 30_000);
});
