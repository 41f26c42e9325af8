import { execFileSync, spawnSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { Ajv } from 'ajv';
import fc from 'fast-check';
import { beforeAll, describe, expect, it } from 'vitest';
import { ingestInput } from '../../src/ingest/index.js';
import { DEFAULT_INGEST } from '../../src/ingest/types.js';
import type { FlowRecord } from '../../src/flow/record.js';
import { Sensor } from '../../src/sensor/sensor.js';
import { ALERT_KEYS } from '../../src/alert/alert.js';

const root = new URL('../../', import.meta.url);
const cli = new URL('dist/src/cli/main.js', root).pathname;
const capture = new URL('captures/larkspur-demo.pcap', root).pathname;
const truth = JSON.parse(readFileSync(new URL('captures/larkspur-demo.truth.json', root), 'utf8')) as { inside: string[] };

describe('tidewatch replay feed', () => {
  it('emits only lines that validate against docs/alert-schema.json, keys in contract order', () => {
    // The contract: DESIGN.md section 4; the schema file is ours (docs/alert-schema.md). ajv 8 validates
    // draft-07 by default (ajv documentation). Runs the compiled CLI as users do (npm test builds first).
    const out = execFileSync('node', [cli, 'replay', capture, '--quiet', '--internal', truth.inside.join(',')], { encoding: 'utf8' });
    const lines = out.split('\n');
    expect(lines.pop()).toBe(''); // JSON Lines: a newline after the last value (jsonlines.org)
    expect(lines.length).toBeGreaterThan(5);
    const schema = JSON.parse(readFileSync(new URL('docs/alert-schema.json', root), 'utf8')) as object;
    const validate = new Ajv({ allErrors: true }).compile(schema);
    for (const line of lines) {
      const a = JSON.parse(line) as Record<string, unknown>;
      expect(validate(a), `${JSON.stringify(validate.errors)} in ${line.slice(0, 200)}`).toBe(true);
      expect(Object.keys(a)).toEqual([...ALERT_KEYS]);
    }
  });
});

describe('tidewatch replay summary', () => {
  it('says when no address is inside --internal, and is silent about it otherwise (ours)', () => {
    const run = (internal: string) => spawnSync('node', [cli, 'replay', capture, '--internal', internal], { encoding: 'utf8' }).stderr;
    expect(run('100.64.0.0/10')).toMatch(/note: none of the \d+ addresses is inside 100\.64\.0\.0\/10; pass --internal/);
    expect(run(truth.inside.join(','))).not.toMatch(/none of the/);
  });
});

describe('--alpha', () => {
  let records: FlowRecord[] = [];
  beforeAll(async () => {
    await ingestInput(capture, (r) => records.push(r), { ...DEFAULT_INGEST });
  });

  function distinctIds(alpha: number): number {
    const ids = new Set<string>();
    const s = new Sensor({ windowMs: 60_000, latenessMs: 5_000, alpha, internal: truth.inside, sensor: 't', mode: 'replay' },
      (a) => ids.add(a.id));
    for (const r of records) s.record(r);
    s.finish();
    return ids.size;
  }

  it('never yields more alerts with a smaller alpha (property, fast-check; the issue states it)', () => {
    fc.assert(fc.property(
      fc.double({ min: -6, max: -1, noNaN: true }), fc.double({ min: 0, max: 3, noNaN: true }),
      (logA, gap) => {
        const large = 10 ** logA;
        const small = 10 ** (logA - gap);
        return distinctIds(small) <= distinctIds(large);
      },
    ), { numRuns: 12 });
  }, 120_000);
});
