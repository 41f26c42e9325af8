import { describe, expect, it } from 'vitest';
import { episodeId } from './id.js';
import { raiseSeverity, severityForScore } from './severity.js';
import { createHash } from 'node:crypto';

describe('severity', () => {
  it('maps scores: < 6 low, < 12 medium, < 25 high, else critical', () => {
    expect([3.1, 5.99, 6, 11.99, 12, 24.99, 25, 1e9, NaN].map(severityForScore))
      .toEqual(['low', 'low', 'medium', 'medium', 'high', 'high', 'critical', 'critical', 'low']);
  });
  it('raises by one step and saturates at critical', () => {
    expect((['low', 'medium', 'high', 'critical'] as const).map(raiseSeverity)).toEqual(['medium', 'high', 'critical', 'critical']);
  });
});

describe('episodeId', () => {
  it('is tw1- plus 16 hex digits of sha256("kind|host|role|startMs")', () => {
    const id = episodeId('horizontal-scan', '10.60.1.9', 'source', 1714978800000);
    const want = createHash('sha256').update('horizontal-scan|10.60.1.9|source|1714978800000').digest('hex').slice(0, 16);
    expect(id).toBe(`tw1-${want}`);
    expect(episodeId('horizontal-scan', '10.60.1.9', 'target', 1714978800000)).not.toBe(id);
  });
});
