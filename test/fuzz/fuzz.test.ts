import fc from 'fast-check';
import { describe, it } from 'vitest';
import { allTargets } from './targets.js';

// The short pass of `npm run fuzz` (test/fuzz/run.ts): a few thousand cases per parser, same targets.
// A failure message carries fast-check's seed and path; rerun it with the runner's --seed/--target.
const PER_PARSER = 3000;

describe('fuzz short pass (fast-check, golden-file mutants)', () => {
  for (const t of allTargets()) {
    it(`${t.parser}/${t.name} holds`, async () => {
      await fc.assert(t.property() as fc.IAsyncProperty<unknown>, { numRuns: Math.max(1, Math.round(PER_PARSER * t.share)) });
    });
  }
});
