import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { CAPS } from '../../src/util/caps.js';
import { ROOT } from './helpers.js';

/** docs/operations.md "Caps" must list every cap of src/util/caps.ts with its counter and default. */
describe('docs/operations.md Caps section', () => {
  const doc = readFileSync(join(ROOT, 'docs', 'operations.md'), 'utf8');
  const caps = doc.slice(doc.indexOf('## Caps'), doc.indexOf('\n## ', doc.indexOf('## Caps') + 1));

  it('names every counter and every default', () => {
    expect(caps.length).toBeGreaterThan(100);
    for (const c of CAPS) {
      if (c.counter) expect(caps).toContain(`\`${c.counter}\``);
      if (c.default !== null) {
        const d = c.default;
        const forms = [String(d), d.toLocaleString('en-US').replace(/,/g, ' '), `${d / 1024} KiB`, `${d / 2 ** 20} MiB`];
        expect(forms.some((f) => caps.includes(f)), `${c.name}: default ${d}`).toBe(true);
      }
    }
  });
});
