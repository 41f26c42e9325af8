// Reference goldens for the capture path: each capture in test/golden/captures/ goes through the compiled
// `tidewatch flows` command and must give exactly the flows the reference script computed.
// expected flows: dpkt 1.9 via test/golden/make_capture_goldens.py (captures written by scapy 2.5),
// following the conventions of src/flow/record.ts. See test/golden/README.md.
import { execFile, spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { promisify } from 'node:util';
import { describe, expect, it } from 'vitest';
import { FLOW_FIELDS } from '../../src/flow/record.js';

const run = promisify(execFile);
const ROOT = fileURLToPath(new URL('../..', import.meta.url));
const GOLDEN_DIR = join(ROOT, 'test/golden/captures');
const SCRIPT = join(ROOT, 'test/golden/make_capture_goldens.py');
const CLI = join(ROOT, 'dist/src/cli/main.js');
const PYTHON = '/usr/bin/python3';

/** The fields compared exactly; start/end are compared to within TIME_TOLERANCE_MS. */
const EXACT_FIELDS = ['proto', 'src', 'dst', 'sport', 'dport', 'pkts', 'bytes', 'rpkts', 'rbytes',
  'flags', 'rflags', 'outcome', 'exporter', 'vlan'] as const;
/** 1 µs: both sides hold epoch ms as doubles (ulp 2^-12 ms near 1.7e12), computed in different orders. */
const TIME_TOLERANCE_MS = 0.001;

type Flow = Record<string, unknown>;

interface GoldenFile {
  capture: string;
  format: string;
  covers: string;
  expected_by: string;
  count: number;
  flows: Flow[];
}

function sortKey(f: Flow): string {
  return [f.proto, f.src, f.dst, f.sport, f.dport, f.start].join('|');
}

function sorted(flows: Flow[]): Flow[] {
  return [...flows].sort((a, b) => (sortKey(a) < sortKey(b) ? -1 : sortKey(a) > sortKey(b) ? 1 : 0));
}

function exactPart(f: Flow): Flow {
  const out: Flow = {};
  for (const k of EXACT_FIELDS) out[k] = f[k];
  return out;
}

async function flowsOf(capture: string): Promise<Flow[]> {
  const { stdout } = await run(process.execPath, [CLI, 'flows', join(GOLDEN_DIR, capture)], {
    cwd: ROOT,
    maxBuffer: 16 * 1024 * 1024,
  });
  return stdout.split('\n').filter((line) => line.length > 0).map((line) => JSON.parse(line) as Flow);
}

const goldens: GoldenFile[] = readdirSync(GOLDEN_DIR)
  .filter((n) => n.endsWith('.flows.json'))
  .sort()
  .map((n) => JSON.parse(readFileSync(join(GOLDEN_DIR, n), 'utf8')) as GoldenFile);

describe('capture goldens through `tidewatch flows`', () => {
  it('finds the goldens and the compiled CLI (npm test builds it; otherwise run npx tsc -p tsconfig.json)', () => {
    expect(goldens.length).toBeGreaterThanOrEqual(20);
    expect(existsSync(CLI)).toBe(true);
  });

  for (const golden of goldens) {
    it(`${golden.capture}: ${golden.covers}`, async () => {
      // expected flows: dpkt 1.9 via test/golden/make_capture_goldens.py (see golden.expected_by)
      const got = sorted(await flowsOf(golden.capture));
      const want = sorted(golden.flows);
      expect(want.length).toBe(golden.count);
      expect(got.map(exactPart)).toEqual(want.map(exactPart));
      for (let i = 0; i < want.length; i++) {
        expect(Math.abs((got[i].start as number) - (want[i].start as number)), `start of ${sortKey(want[i])}`)
          .toBeLessThanOrEqual(TIME_TOLERANCE_MS);
        expect(Math.abs((got[i].end as number) - (want[i].end as number)), `end of ${sortKey(want[i])}`)
          .toBeLessThanOrEqual(TIME_TOLERANCE_MS);
      }
      // Contract (src/flow/record.ts): keys in FLOW_FIELDS order, vlan only when known.
      for (const rec of got) {
        expect(Object.keys(rec)).toEqual(FLOW_FIELDS.filter((k) => k in rec));
      }
    });
  }
});

function referenceAvailable(): boolean {
  if (!existsSync(PYTHON)) return false;
  return spawnSync(PYTHON, ['-c', 'import scapy, dpkt'], { stdio: 'ignore' }).status === 0;
}

const regoldWanted = process.env.TIDEWATCH_REGOLD === '1' || Boolean(process.env.CI);
const canRegold = regoldWanted && referenceAvailable();
const regoldName = canRegold
  ? 'the reference script reproduces the committed goldens byte for byte'
  : 'regeneration check skipped: needs TIDEWATCH_REGOLD=1 or CI set, and /usr/bin/python3 with scapy and dpkt';

describe('capture goldens are reproducible', () => {
  it.skipIf(!canRegold)(regoldName, () => {
    // source: scapy 2.5 writes the captures, dpkt 1.9 computes the flows (test/golden/make_capture_goldens.py)
    const out = mkdtempSync(join(tmpdir(), 'tidewatch-regold-'));
    try {
      const res = spawnSync(PYTHON, [SCRIPT, '--out', out], { encoding: 'utf8' });
      expect(res.status, res.stderr).toBe(0);
      const made = readdirSync(out).sort();
      expect(made).toEqual(readdirSync(GOLDEN_DIR).sort());
      for (const name of made) {
        const fresh = readFileSync(join(out, name));
        const committed = readFileSync(join(GOLDEN_DIR, name));
        expect(fresh.equals(committed), `${name} differs from the committed golden`).toBe(true);
      }
    } finally {
      rmSync(out, { recursive: true, force: true });
    }
  });
});
