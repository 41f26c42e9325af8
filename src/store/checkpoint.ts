import type { Sensor } from '../sensor/sensor.js';
import type { AggregatorSnapshot } from '../window/aggregator.js';
import type { EngineRunState } from '../detect/engine.js';
import type { TrackerState } from '../alert/episodes.js';
import { bytesOf, f64, fromJson, modelFromBytes, modelToBytes, slotsFromBytes, slotsToBytes, toJson, u16, u8 } from './codec.js';
import { StateError, type StateStore } from './store.js';

/** Version of the checkpoint layout in run_state (independent of the SQL schema version). */
export const CHECKPOINT_FORMAT = 1;

/** What a checkpoint was made with; a run with other settings would misread it. */
export interface CheckpointMeta {
  format: number;
  windowMs: number;
  internal: string[];
  savedAt: string;
}

type AggregatorJson = Omit<AggregatorSnapshot, 'prevalence' | 'insideSeen' | 'history'> & { forgotten: number; hasOld: boolean };

/**
 * Writes everything the sensor learned and holds between windows: the aggregator (address ids, peer
 * history, prevalence, inside marks, recent new peers, next window), every host model and baseline
 * slot, the engine's run state and the tracker's open episodes. Call inside one transaction, between
 * windows: after Sensor.suspend(), or with `midRun` as a window closes while later ones are open (a
 * live run's periodic checkpoint: what the open windows hold so far is not part of it). With `changed`
 * (the address ids whose model or baselines may have changed since the file's last checkpoint) only
 * those hosts' rows are written; everything else is written whole either way.
 */
export function saveCheckpoint(store: StateStore, sensor: Sensor, midRun = false, changed?: Iterable<number>): void {
  const agg = sensor.aggregator;
  const s = agg.snapshot(midRun);
  const { prevalence, insideSeen, history, ...rest } = s;
  const aggJson: AggregatorJson = { ...rest, forgotten: history.forgotten, hasOld: history.old !== null };
  store.putState('aggregator', toJson(aggJson));
  store.putState('aggregator.prevalence', bytesOf(prevalence));
  store.putState('aggregator.insideSeen', bytesOf(insideSeen));
  store.putState('aggregator.history.young', bytesOf(history.young));
  store.putState('aggregator.history.old', history.old ? bytesOf(history.old) : Buffer.alloc(0));
  store.putState('engine', toJson(sensor.engine.runState()));
  store.putState('baselines.missing', toJson({ intervals: sensor.engine.baselines.missingIntervals(), openSince: sensor.gapStart }));
  store.putState('tracker', toJson(sensor.tracker.snapshot()));

  const name = (id: number) => agg.addresses.name(id);
  const { counts, plain } = sensor.engine.baselines;
  const banks = [['counts', counts], ['plain', plain]] as const;
  /** A host's slots of a bank as stored, or null when none of them has learned anything. */
  const slotsOf = (bank: typeof counts, id: number): Buffer | null => {
    let used = false;
    for (let f = 0; f < bank.features && !used; f++) used = bank.isUsed(bank.slotOf(id, f));
    return used ? slotsToBytes(bank, id) : null;
  };
  if (changed) {
    // the rows of hosts not in `changed` are as the last checkpoint wrote them
    for (const id of changed) {
      const address = name(id);
      if (address === undefined || agg.addresses.peek(address) !== id) continue;
      const m = sensor.engine.models.get(id);
      store.putModel(address, agg.isInsideId(id), m?.lastActiveStart ?? 0, m ? modelToBytes(m) : null);
      for (const [bankName, bank] of banks) store.putBaseline(address, bankName, slotsOf(bank, id));
    }
  } else {
    const models = [...sensor.engine.models].map(([id, m]) => ({
      address: name(id), inside: agg.isInsideId(id), lastSeen: m.lastActiveStart, model: modelToBytes(m),
    }));
    store.putModels(models);
    const rows: { address: string; bank: string; slots: Buffer }[] = [];
    for (let id = 0; id < agg.addresses.capacity; id++) {
      const address = name(id);
      if (agg.addresses.peek(address) !== id) continue; // a released id
      for (const [bankName, bank] of banks) {
        const slots = slotsOf(bank, id);
        if (slots) rows.push({ address, bank: bankName, slots });
      }
    }
    store.putBaselines(rows);
  }

  const meta: CheckpointMeta = {
    format: CHECKPOINT_FORMAT, windowMs: sensor.opts.windowMs, internal: [...sensor.opts.internal],
    savedAt: new Date().toISOString(),
  };
  store.putState('meta', toJson(meta));
}

/** The checkpoint's settings, or null when the file holds none yet. */
export function checkpointMeta(store: StateStore): CheckpointMeta | null {
  const m = store.getState('meta');
  return m ? fromJson<CheckpointMeta>(m) : null;
}

/**
 * Loads the checkpoint into a fresh sensor (before its first record). Returns false when the file
 * holds none; throws StateError when it was made with another window length or inside list, or in
 * a format this build does not read.
 */
export function restoreCheckpoint(store: StateStore, sensor: Sensor): boolean {
  const meta = checkpointMeta(store);
  if (!meta) return false;
  if (meta.format !== CHECKPOINT_FORMAT) throw new StateError(`state checkpoint format ${meta.format} is not readable by this tidewatch (${CHECKPOINT_FORMAT})`);
  if (meta.windowMs !== sensor.opts.windowMs) throw new StateError(`the state was learned with --window ${meta.windowMs / 1000}s, not ${sensor.opts.windowMs / 1000}s`);
  const same = (a: readonly string[], b: readonly string[]) => [...a].sort().join(',') === [...b].sort().join(',');
  if (!same(meta.internal, sensor.opts.internal)) throw new StateError(`the state was learned with --internal ${meta.internal.join(',')}`);

  const need = (key: string): Buffer => {
    const v = store.getState(key);
    if (v === undefined) throw new StateError(`state checkpoint incomplete: ${key} missing`);
    return v;
  };
  const a = fromJson<AggregatorJson>(need('aggregator'));
  const old = need('aggregator.history.old');
  const { forgotten, hasOld, ...rest } = a;
  sensor.aggregator.restore({
    ...rest,
    prevalence: u16(need('aggregator.prevalence')),
    insideSeen: u8(need('aggregator.insideSeen')),
    history: { young: f64(need('aggregator.history.young')), old: hasOld ? f64(old) : null, forgotten },
  });
  sensor.engine.restoreRunState(fromJson<EngineRunState>(need('engine')));
  // absent from checkpoints written before it was kept: no intervals then
  const missing = store.getState('baselines.missing');
  const m = missing ? fromJson<{ intervals: number[]; openSince: number }>(missing) : { intervals: [], openSince: Number.NaN };
  sensor.engine.baselines.restoreMissingIntervals(m.intervals);
  // a run of empty windows still going at the checkpoint goes on in this run
  sensor.gapStart = m.openSince;
  sensor.tracker.restore(fromJson<TrackerState>(need('tracker')));

  const addresses = sensor.aggregator.addresses;
  const engine = sensor.engine;
  engine.models.clear();
  for (const r of store.models()) {
    const id = addresses.peek(r.address);
    const m = id >= 0 ? modelFromBytes(id, engine.baselines, r.model) : null;
    if (!m) throw new StateError(`state checkpoint: unreadable model of ${r.address}`);
    engine.models.set(id, m);
  }
  for (const r of store.baselines()) {
    const id = addresses.peek(r.address);
    const bank = r.bank === 'counts' ? engine.baselines.counts : r.bank === 'plain' ? engine.baselines.plain : null;
    if (id < 0 || !bank || !slotsFromBytes(bank, id, r.slots)) throw new StateError(`state checkpoint: unreadable ${r.bank} baselines of ${r.address}`);
  }
  return true;
}
