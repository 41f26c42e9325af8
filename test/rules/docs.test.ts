import { readFileSync } from 'node:fs';
import { expect, it } from 'vitest';
import { loadRules } from '../../src/rules/load.js';
import { ruleFile } from '../../src/rules/testing.js';

const doc = readFileSync('docs/rules.md', 'utf8');
const blocks = [...doc.matchAll(/```yaml\n([\s\S]*?)```/g)].map((m) => m[1]!);

it('docs/rules.md: the Larkspur example is test/rules/good/larkspur-site.yaml (without its header comment)', () => {
  const file = readFileSync('test/rules/good/larkspur-site.yaml', 'utf8').replace(/^(#.*\n)+/, '');
  expect(blocks).toContain(file);
});

it('docs/rules.md: every YAML example is a valid rule set', () => {
  expect(blocks.length).toBeGreaterThanOrEqual(3);
  for (const b of blocks) expect(loadRules(ruleFile(b))).toHaveProperty('ok');
});
