import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { Sensor } from '../../src/sensor/sensor.js';
import { SensorState } from '../../src/store/session.js';
import { flowLogLine, LOG_T0, readStatus, startCli, waitFor } from './helpers.js';

// `watch --state --checkpoint-interval`: a live sensor killed with SIGKILL (no stop, no final
// checkpoint) keeps what it learned up to its last periodic checkpoint, and the next start continues
// from it. Behaviour is ours (docs/operations.md, How watch runs: State): common practice, no source.
const dir = mkdtempSync(join(tmpdir(), 'tidewatch-live-checkpoint-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const T = LOG_T0;
const line = flowLogLine;

describe('watch checkpoints', () => {
  it('a sensor killed without its stop restarts from its last periodic checkpoint', async () => {
    const log = join(dir, 'flows.jsonl'), status = join(dir, 'status.json'), db = join(dir, 'live.db');
    writeFileSync(log, Array.from({ length: 20 }, (_, i) => line(i)).join(''));
    const w = startCli(['watch', '--follow', log, '--window', '1s', '--lateness', '0s', '--idle-after', '200ms',
      '--state', db, '--checkpoint-interval', '300ms', '--status-json', status, '--status-interval', '100ms',
      '--internal', '10.60.0.0/16', '--quiet']);
    try {
      const s = await waitFor('a periodic checkpoint', () => {
        const x = readStatus(status);
        return x && x.records === 20 && (x.state?.checkpoints ?? 0) >= 1 ? x : null;
      });
      expect(s.state!.path).toBe(db);
      expect(s.state!.failed).toBeNull();
      expect(Date.parse(s.state!.last_checkpoint!)).toBeGreaterThan(T);
      w.child.kill('SIGKILL');
      await w.exited;
    } finally {
      w.child.kill('SIGKILL');
    }
    // what the next start restores (the same window and inside list as the killed run)
    const state = SensorState.open(db);
    const sensor = new Sensor({ windowMs: 1000, latenessMs: 0, alpha: 0.001, internal: ['10.60.0.0/16'], sensor: 't', mode: 'live' }, state.emitter(() => {}));
    state.attach(sensor);
    expect(state.restored).toBe(true);
    expect(sensor.aggregator.addresses.peek('10.60.1.10')).toBeGreaterThanOrEqual(0);
    expect(sensor.aggregator.addresses.peek('198.51.100.2')).toBeGreaterThanOrEqual(0);
    state.close();
  }, 20_000);

  it('--checkpoint-interval must be a duration', async () => {
    const w = startCli(['watch', '--follow', join(dir, 'none.jsonl'), '--state', join(dir, 'x.db'), '--checkpoint-interval', 'soon']);
    expect(await w.exited).toBe(2);
    expect(w.stderr()).toMatch(/--checkpoint-interval: expected a duration/);
  });
});
