import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { Sensor } from '../../src/sensor/sensor.js';
import { SensorState } from '../../src/store/session.js';
import { learnedState, readRecords, sensorOptions } from './helpers.js';

// Periodic checkpoints of a live run (`watch --state --checkpoint-interval`): the learned state is
// written as a window closes while later windows are still open, in that window's transaction, so a
// process that dies without its stop keeps what it had learned up to the last checkpoint. What open
// windows had gathered is not in a checkpoint (docs/operations.md, State). Behaviour is ours: common
// practice, no source.
const dir = mkdtempSync(join(tmpdir(), 'tidewatch-checkpoint-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
const DEMO = new URL('../../captures/larkspur-demo.pcap', import.meta.url).pathname;

describe('live checkpoints', () => {
  it('are written as windows close with later windows open, and a killed run restarts from the last one', async () => {
    const records = await readRecords(DEMO);
    const half = records.slice(0, Math.floor(records.length / 2));
    const db = join(dir, 'live.db');
    let wall = 0;
    // a fake wall clock: one minute passes per closed window, the interval is five minutes
    const state = SensorState.open(db, { checkpointEveryMs: 5 * 60_000, now: () => wall });
    const sensor = new Sensor(sensorOptions({ mode: 'live' }), state.emitter(() => {}));
    state.attach(sensor);
    const hooked = sensor.onWindowClosed!;
    let closed = 0;
    let atLast: { models: number; addresses: number; nextWindow: number } | null = null;
    sensor.onWindowClosed = (w) => {
      wall += 60_000;
      const before = state.checkpoints.count;
      hooked(w);
      closed++;
      if (state.checkpoints.count > before) {
        atLast = { models: sensor.engine.models.size, addresses: sensor.aggregator.addresses.size, nextWindow: w.end };
      }
    };
    for (const r of half) sensor.record(r);
    expect(closed).toBeGreaterThanOrEqual(10);
    // every fifth window's close (the first once five minutes have passed)
    expect(state.checkpoints.count).toBe(Math.floor(closed / 5));
    expect(atLast).not.toBeNull();
    // the "crash": the store is closed without the stop's suspend and checkpoint
    state.close();

    const again = SensorState.open(db);
    const restored = new Sensor(sensorOptions({ mode: 'live' }), again.emitter(() => {}));
    again.attach(restored);
    expect(again.restored).toBe(true);
    expect(restored.engine.models.size).toBe(atLast!.models);
    expect(restored.aggregator.addresses.size).toBe(atLast!.addresses);
    // it goes on from the window after the checkpoint's: the rest of the input closes windows again
    const windowsBefore = restored.aggregator.stats.windowsClosed;
    let firstClosed = Number.NaN;
    const rehooked = restored.onWindowClosed!;
    restored.onWindowClosed = (w) => { if (Number.isNaN(firstClosed)) firstClosed = w.start; rehooked(w); };
    for (const r of records.slice(half.length)) restored.record(r);
    again.suspend();
    again.close();
    expect(firstClosed).toBe(atLast!.nextWindow);
    expect(restored.aggregator.stats.windowsClosed).toBeGreaterThan(windowsBefore);
    expect(learnedState(db).hosts).not.toHaveLength(0);
  });

  it('an incremental checkpoint (hosts active or evicted since the last) leaves the file as a full one does', async () => {
    const records = await readRecords(DEMO);
    const part = records.slice(0, Math.floor(records.length * 0.7));
    // two days later one host talks for 90 minutes: the engine's idle scan evicts the demo's
    // short-lived hosts, whose rows an incremental checkpoint must clear as a full one does
    const later = part.at(-1)!.end + 2 * 86_400_000;
    for (let i = 0; i < 90 * 6; i++) {
      const t = later + i * 10_000;
      part.push({ start: t, end: t + 50, proto: 6, src: '10.60.3.77', dst: '198.51.100.9', sport: 40_000 + (i % 1000), dport: 443,
        pkts: 4, bytes: 400, rpkts: 4, rbytes: 900, flags: 0x1b, rflags: 0x1b, outcome: 'established', exporter: 't' });
    }
    const files: string[] = [];
    for (const incremental of [true, false]) {
      const db = join(dir, `incremental-${incremental}.db`);
      files.push(db);
      let wall = 0;
      const state = SensorState.open(db, { checkpointEveryMs: 60 * 60_000, incrementalCheckpoints: incremental, now: () => wall });
      const sensor = new Sensor(sensorOptions({ mode: 'live' }), state.emitter(() => {}));
      state.attach(sensor);
      const hooked = sensor.onWindowClosed!;
      sensor.onWindowClosed = (w) => { wall += 60_000; hooked(w); };
      for (const r of part) sensor.record(r);
      expect(state.checkpoints.count).toBeGreaterThanOrEqual(3);
      expect(sensor.engine.stats.modelsEvicted).toBeGreaterThan(0);
      state.close(); // killed: the last periodic checkpoint is what the file holds
    }
    const [a, b] = files.map((f) => learnedState(f));
    expect(a!.hosts).not.toHaveLength(0);
    expect(a).toEqual(b);
  });

  it('a run of empty windows cut by a checkpoint and a crash still counts as missing input whole', () => {
    // host A in windows 0-19 and 30-59, no input at all in 20-29; the crashed run's checkpoint falls at
    // the close of window 20, inside the gap
    const W = 60_000, T0 = Date.UTC(2026, 2, 10, 9, 0);
    const recs = [];
    for (let w = 0; w < 60; w++) {
      if (w >= 20 && w < 30) continue;
      for (let i = 0; i < 5; i++) {
        const t = T0 + w * W + i * 1000;
        recs.push({ start: t, end: t + 20, proto: 6, src: '10.60.1.10', dst: '198.51.100.20', sport: 40_000 + i, dport: 443, pkts: 3 + (w % 3),
          bytes: 300 + 10 * (w % 5), rpkts: 3, rbytes: 900, flags: 0x1b, rflags: 0x1b, outcome: 'established' as const, exporter: 't' });
      }
    }
    const before = recs.filter((r) => r.start < T0 + 20 * W), after = recs.filter((r) => r.start >= T0 + 30 * W);
    const inGap = T0 + 26 * W + 5_000; // event time moved on by idleness: windows up to 25 close
    const whole = join(dir, 'gap-whole.db'), crashed = join(dir, 'gap-crashed.db');
    {
      const state = SensorState.open(whole);
      const sensor = new Sensor(sensorOptions({ mode: 'live' }), state.emitter(() => {}));
      state.attach(sensor);
      for (const r of before) sensor.record(r);
      sensor.advance(inGap);
      for (const r of after) sensor.record(r);
      state.suspend();
      state.close();
    }
    {
      let wall = 0;
      const state = SensorState.open(crashed, { checkpointEveryMs: 1_000, now: () => wall });
      const sensor = new Sensor(sensorOptions({ mode: 'live' }), state.emitter(() => {}));
      state.attach(sensor);
      const hooked = sensor.onWindowClosed!;
      // the checkpoint falls due at window 20's close, the first of the gap (every window with data closed)
      sensor.onWindowClosed = (w) => { wall = w.start === T0 + 20 * W ? 1_000 : 0; hooked(w); };
      for (const r of before) sensor.record(r);
      sensor.advance(inGap);
      expect(state.checkpoints.count).toBe(1);
      state.close(); // killed in the gap
      const again = SensorState.open(crashed);
      const restored = new Sensor(sensorOptions({ mode: 'live' }), again.emitter(() => {}));
      again.attach(restored);
      for (const r of after) restored.record(r);
      again.suspend();
      again.close();
    }
    expect(learnedState(crashed)).toEqual(learnedState(whole));
  });

  it('without an interval writes the learned state only at the stop', async () => {
    const records = await readRecords(DEMO);
    const db = join(dir, 'stop-only.db');
    const state = SensorState.open(db);
    const sensor = new Sensor(sensorOptions({ mode: 'live' }), state.emitter(() => {}));
    state.attach(sensor);
    for (const r of records) sensor.record(r);
    expect(state.checkpoints.count).toBe(0);
    state.suspend();
    expect(state.checkpoints.count).toBe(1);
    state.close();
  });
});
