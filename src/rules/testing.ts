import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { loadRules } from './load.js';
import type { RuleSet } from './ruleset.js';

/** Tests: writes one rule file into a fresh temporary folder and returns its path. */
export function ruleFile(text: string, name = 'rules.yaml'): string {
  const dir = mkdtempSync(join(tmpdir(), 'tidewatch-rules-'));
  const file = join(dir, name);
  writeFileSync(file, text);
  return file;
}

/** Tests: a rule set from YAML text; throws with the messages when invalid. */
export function rulesFrom(text: string): RuleSet {
  const r = loadRules(ruleFile(text));
  if ('errors' in r) throw new Error(r.errors.join('\n'));
  return r.ok;
}
