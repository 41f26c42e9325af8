/**
 * Output safety: text from input data reaches a terminal with its control characters escaped, SQL
 * takes bound parameters only, and rule files are data (no YAML tags, anchors or aliases).
 * Control characters: ECMA-48 C0 (0x00-0x1f), DEL and C1 (0x80-0x9f, CSI is 0x9b). YAML tags and
 * aliases: YAML 1.2 sections 6.9.1 and 7.1.
 */
import { mkdtempSync, readdirSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { alertToJson } from '../../src/alert/serialize.js';
import { flowToJson } from '../../src/flow/format.js';
import { loadRules } from '../../src/rules/load.js';
import { escapeControls, formatConsoleLine } from '../../src/sink/console.js';
import { StateStore } from '../../src/store/store.js';
import { ROOT, alertFixture, cli, rec } from './helpers.js';

const work = mkdtempSync(join(tmpdir(), 'tw-safety-'));
/** Anything a terminal would act on: C0 but tab... no: every C0, DEL, C1. */
const RAW_CONTROL = /[\u0000-\u0009\u000b-\u001f\u007f-\u009f]/;
const EVIL = '\u001b[2J\u001b]0;owned\u0007\r\u009b31m\u007f\u2028';

describe('terminal output escapes control characters from input data', () => {
  it('escapeControls: C0, DEL, C1 and the Unicode line separators become visible escapes; other text stays', () => {
    expect(escapeControls(`a${EVIL}b é 中`)).toBe('a\\x1b[2J\\x1b]0;owned\\x07\\x0d\\x9b31m\\x7f\\u2028b é 中');
    expect(escapeControls('a\nb')).toBe('a\\x0ab');
  });

  it('alert lines on a terminal: host, kind, explanation and rule-derived text escaped', () => {
    const line = formatConsoleLine(alertFixture({ host: `10.0.0.1${EVIL}`, feature: `f${EVIL}` }), false);
    expect(RAW_CONTROL.test(line)).toBe(false);
    expect(line).not.toContain('\n');
  });

  it('JSON lines (alert feed and flow records) leave no raw DEL, C1 or line separator either', () => {
    const a = alertToJson(alertFixture({ sensor: `s${EVIL}` }));
    expect(RAW_CONTROL.test(a) || /[\u2028\u2029]/.test(a)).toBe(false);
    expect(JSON.parse(a).sensor).toBe(`s${EVIL}`); // the data itself is unchanged
    const f = flowToJson(rec({ exporter: `e${EVIL}` }));
    expect(RAW_CONTROL.test(f) || /[\u2028\u2029]/.test(f)).toBe(false);
    expect(JSON.parse(f).exporter).toBe(`e${EVIL}`);
  });

  it('flows: problem lines quoting flow-log fields and the input name are escaped on stderr', async () => {
    const name = join(work, `log\u001b[31m.jsonl`);
    writeFileSync(name, [
      JSON.stringify({ src: '192.0.2.1', dst: '198.51.100.2', proto: 'tcp', start: 1_700_000_000, exporter: `ex${EVIL}` }),
      JSON.stringify({ src: `192.0.2.1${EVIL}`, dst: '198.51.100.2', proto: 'tcp', start: 1_700_000_000 }),
      `{"src": "\u001b[2J`,
    ].join('\n'));
    const r = await cli(['flows', name]);
    expect(r.code).toBe(0);
    expect(RAW_CONTROL.test(r.stderr.replace(/\n/g, ''))).toBe(false);
    expect(r.stderr).toContain('\\x1b[31m.jsonl');
    expect(JSON.parse(r.stdout.split('\n')[0]!).exporter).toBe(`ex${EVIL}`); // piped JSON: data kept, escaped as JSON
  });

  it('rule errors quoting the file (rule names, values) print one line each, escaped', async () => {
    const f = join(work, 'evil.yaml');
    writeFileSync(f, `rules: "\\e[2J\\nnot a list"\ninside: ["10.0.0.0/8\\e]0;x\\a"]\n`);
    const r = await cli(['rules', 'check', f]);
    expect(r.code).toBe(2);
    const out = r.stdout.trimEnd().split('\n');
    expect(out.length).toBeGreaterThanOrEqual(1);
    for (const l of out) {
      expect(l.startsWith(`${f}:`)).toBe(true);
      expect(RAW_CONTROL.test(l)).toBe(false);
    }
    expect(r.stdout).toContain('\\x1b[2J');
  });
});

describe('SQL is parameterised', () => {
  const sources = (dir: string): string[] => readdirSync(dir).flatMap((n) => {
    const p = join(dir, n);
    return statSync(p).isDirectory() ? sources(p) : p.endsWith('.ts') && !p.endsWith('.test.ts') ? [p] : [];
  });

  it('grep: no SQL text handed to prepare/exec/pragma is built from interpolated values', () => {
    const calls: string[] = [];
    for (const f of sources(join(ROOT, 'src'))) {
      const text = readFileSync(f, 'utf8');
      if (!text.includes("from 'better-sqlite3'")) continue; // RegExp.exec elsewhere
      for (const m of text.matchAll(/\.(prepare|exec|pragma)\(\s*(`[^`]*`|'[^']*'|"[^"]*"|[A-Za-z_][\w.]*)/g)) calls.push(`${f}: ${m[2]}`);
    }
    expect(calls.length).toBeGreaterThan(15);
    // the one interpolation: PRAGMA user_version takes no parameters; the value is a schema constant
    const interpolated = calls.filter((c) => c.includes('${'));
    expect(interpolated).toEqual([expect.stringMatching(/schema\.ts: `user_version = \$\{m\.version\}`$/)]);
    // exec() runs migration SQL from the schema table only
    expect(calls.filter((c) => /: [A-Za-z_]/.test(c))).toEqual([expect.stringMatching(/schema\.ts: m\.sql$/)]);
  });

  it('quotes and SQL in alert fields and label notes are stored and read back as data', () => {
    const db = join(work, 'sql.db');
    const s = StateStore.open(db);
    const host = `10.0.0.1'); DROP TABLE alerts; --`;
    const a = alertFixture({ host, rule: `r" OR 1=1 --` });
    expect(s.putAlert(a, alertToJson(a), null)).toBe(true);
    const back = s.alerts({ host });
    expect(back).toHaveLength(1);
    expect(JSON.parse(back[0]!.json).rule).toBe(`r" OR 1=1 --`);
    expect(s.alerts({ host: "' OR '1'='1" })).toHaveLength(0);
    s.close();
  });
});

describe('rule files can run no code', () => {
  const cases: [string, string, RegExp][] = [
    ['js-function tag', 'rules: !!js/function "function () { process.exit(9) }"\n', /tags are not allowed/],
    ['python object tag', 'inside: !!python/object/apply:os.system ["true"]\n', /tags are not allowed/],
    ['custom local tag', 'rules: !include other.yaml\n', /tags are not allowed/],
    ['anchor and alias', 'inside: &a [10.0.0.0/8]\nallow: *a\n', /anchors are not allowed|aliases are not allowed/],
    ['merge key', 'base: &b {enabled: false}\nrules:\n  - <<: *b\n    id: x\n    detector: volume-surge\n', /anchors are not allowed|aliases are not allowed/],
  ];
  for (const [what, text, msg] of cases) {
    it(`refuses ${what}`, () => {
      const f = join(work, `${what.replace(/\W/g, '-')}.yaml`);
      writeFileSync(f, text);
      const r = loadRules(f);
      expect('errors' in r).toBe(true);
      expect(('errors' in r ? r.errors : []).join('\n')).toMatch(msg);
    });
  }

  it('an alias bomb (billion laughs) is refused at once, never expanded', () => {
    const lines = ['a0: &a0 [x, x, x, x, x, x, x, x, x, x]'];
    for (let i = 1; i < 10; i++) lines.push(`a${i}: &a${i} [${Array(10).fill(`*a${i - 1}`).join(', ')}]`);
    const f = join(work, 'bomb.yaml');
    writeFileSync(f, `${lines.join('\n')}\n`);
    const t0 = Date.now();
    const r = loadRules(f);
    expect(Date.now() - t0).toBeLessThan(2000);
    expect('errors' in r && r.errors.some((e) => /aliases are not allowed|anchors are not allowed/.test(e))).toBe(true);
  });
});
