import { createReadStream, createWriteStream, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { once } from 'node:events';
import { createInterface } from 'node:readline';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { generateScenario } from '../../src/scenario/index.js';
import type { Truth } from '../../src/scenario/truth.js';
import type { Alert } from '../../src/alert/alert.js';
import { parseRfc3339 } from '../../src/util/time.js';
import { cli } from './helpers.js';

// Issue 5 acceptance: `train` on days 1-7 of the rhythm scenario's flow log (docs/scenario.md section 3),
// then `replay --state` of day 8 alone: the nightly backup raises nothing and the 14:00 burst (truth
// episode E1-daytime-backup) alerts in its first window, with no warm-up in the day-8 run. Ground
// truth: the generator's truth file; the thresholds are the issue's, no outside source.
const dir = mkdtempSync(join(tmpdir(), 'tidewatch-train-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** Splits a JSON-lines flow log by record start: before `ms` to `a`, the rest to `b`. */
async function splitLog(file: string, ms: number, a: string, b: string): Promise<void> {
  const [wa, wb] = [createWriteStream(a), createWriteStream(b)];
  for await (const line of createInterface({ input: createReadStream(file) })) {
    if (line === '') continue;
    (JSON.parse(line).start < ms ? wa : wb).write(`${line}\n`);
  }
  wa.end(); wb.end();
  await Promise.all([once(wa, 'close'), once(wb, 'close')]);
}

describe('train, then replay of day 8', () => {
  it('learns the nightly backup and flags the daytime burst in its first window', async () => {
    const { dataFile, truthFile } = await generateScenario({ kind: 'rhythm', seed: 1, outDir: dir });
    const truth = JSON.parse(readFileSync(truthFile, 'utf8')) as Truth;
    const day8 = Date.UTC(2026, 2, 11);
    const [days, last] = [join(dir, 'days1-7.jsonl'), join(dir, 'day8.jsonl')];
    await splitLog(dataFile, day8, days, last);
    rmSync(dataFile);
    const db = join(dir, 'state.db');
    const common = ['--internal', truth.inside.join(','), '--quiet'];

    const train = cli(['train', days, '--state', db, ...common]);
    expect(train.status).toBe(0);
    expect(train.stdout).toBe(''); // training alerts nothing
    const replay = cli(['replay', last, '--state', db, '--format', 'jsonl', ...common]);
    expect(replay.status).toBe(0);
    const alerts = replay.stdout.split('\n').filter(Boolean).map((l) => JSON.parse(l) as Alert);

    const night = truth.benign.find((b) => b.label === 'nightly-backup' && parseRfc3339(b.start) >= day8)!;
    const from = parseRfc3339(night.start) - 3_600_000;
    const to = parseRfc3339(night.end) + 3_600_000;
    const raised = alerts.filter((a) => night.hosts.includes(a.host) && parseRfc3339(a.start) <= to && parseRfc3339(a.end) >= from);
    expect(raised.map((a) => `${a.kind} ${a.host} ${a.start}`)).toEqual([]);

    const burst = truth.episodes.find((e) => e.id === 'E1-daytime-backup')!;
    const start = parseRfc3339(burst.start);
    const first = alerts.filter((a) => a.kind === 'volume-surge' && a.state === 'open'
      && [...burst.attackers, ...burst.victims].includes(a.host) && parseRfc3339(a.start) >= start - 60_000)
      .sort((a, b) => parseRfc3339(a.start) - parseRfc3339(b.start))[0];
    expect(first, 'volume-surge on the burst').toBeDefined();
    // first window: the alert's window holds the burst's start
    expect(parseRfc3339(first!.start)).toBeLessThanOrEqual(start);
    expect(parseRfc3339(first!.start) + 60_000).toBeGreaterThan(start);
  }, 90_000);
});
