import { existsSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { compileSources } from './compile.js';
import { RuleSet } from './ruleset.js';
import { readRuleSource, ruleFiles, type RuleSource } from './source.js';

export type LoadResult = { ok: RuleSet } | { errors: string[] };

/**
 * Loads a rule file or a folder of them. Pure apart from reading the files, so it can run again at
 * runtime (a reload swaps the RuleSet only when the new set is valid).
 */
export function loadRules(path: string): LoadResult {
  const errors: string[] = [];
  const sources: RuleSource[] = [];
  for (const f of ruleFiles(path, errors)) {
    const s = readRuleSource(f, errors);
    if (s) sources.push(s);
  }
  const parts = compileSources(sources, errors);
  return parts && errors.length === 0 ? { ok: new RuleSet(parts) } : { errors };
}

/** The `rules/` folder shipped in the package (found from this module, in src/ or in dist/src/). */
export function shippedRulesDir(): string {
  let dir = dirname(fileURLToPath(import.meta.url));
  for (let i = 0; i < 5; i++) {
    if (existsSync(join(dir, 'package.json')) && existsSync(join(dir, 'rules'))) return join(dir, 'rules');
    dir = dirname(dir);
  }
  throw new Error('the shipped rules/ folder is missing from the package');
}
