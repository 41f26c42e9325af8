import { ingestInput } from '../../src/ingest/index.js';
import { DEFAULT_INGEST } from '../../src/ingest/types.js';
import { Sensor, type SensorOptions } from '../../src/sensor/sensor.js';
import type { Alert } from '../../src/alert/alert.js';
import { alertToJson } from '../../src/alert/serialize.js';
import { applyLateness } from '../../src/cli/options.js';

/** Replays files through the sensor in-process (what `tidewatch replay` does) and returns the feed lines. */
export async function replayFiles(
  files: readonly string[], inside: readonly string[], extra: Partial<SensorOptions> = {},
): Promise<{ alerts: Alert[]; lines: string[] }> {
  const alerts: Alert[] = [];
  const sensor = new Sensor({
    windowMs: 60_000, latenessMs: 5_000, alpha: 0.001, internal: inside, sensor: 'test', mode: 'replay', ...extra,
  }, (a) => alerts.push(a));
  for (const f of files) {
    await ingestInput(f, sensor.record, { ...DEFAULT_INGEST, onFormat: (fmt) => applyLateness(sensor, fmt) });
  }
  sensor.finish();
  return { alerts, lines: alerts.map(alertToJson) };
}
