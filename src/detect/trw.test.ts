import { describe, expect, it } from 'vitest';
import { trwStep, TRW_THETA0, TRW_THETA1 } from './trw.js';
import { thresholdsFor } from './thresholds.js';

describe('Threshold Random Walk', () => {
  // Wald's thresholds with the paper's alpha = 0.01, beta = 0.99 (Jung et al. 2004; METHODS.md 6.1,
  // check value row 33): eta1 = beta / alpha = 99, eta0 = (1 - beta) / (1 - alpha) = 0.010101.
  const upper = Math.log(0.99 / 0.01);
  const lower = Math.log(0.01 / 0.99);

  it('uses the paper parameters theta0 = 0.8, theta1 = 0.2 (METHODS.md row 34, from memory of the paper)', () => {
    expect([TRW_THETA0, TRW_THETA1]).toEqual([0.8, 0.2]);
    expect(Math.exp(upper)).toBeCloseTo(99, 9);
    expect(Math.exp(lower)).toBeCloseTo(0.010101, 6);
  });

  it('decides "scanner" after 4 straight failures (Lambda = 256 >= 99) but not after 3 (64): METHODS row 34', () => {
    const s = { trwLog: 0, trwDecided: 0 as const as 0 | 1 | -1 };
    for (let i = 0; i < 3; i++) expect(trwStep(s, 0, 1, upper, lower)).toBe(0);
    expect(Math.exp(s.trwLog)).toBeCloseTo(64, 9);
    expect(trwStep(s, 0, 1, upper, lower)).toBe(1);
    expect(Math.exp(s.trwLog)).toBeCloseTo(256, 9);
  });

  it('decides "benign" after 4 straight successes (Lambda = 0.00390625 <= 0.010101) and restarts: METHODS row 34', () => {
    const s = { trwLog: 0, trwDecided: 0 as 0 | 1 | -1 };
    for (let i = 0; i < 3; i++) expect(trwStep(s, 1, 0, upper, lower)).toBe(0);
    expect(Math.exp(s.trwLog)).toBeCloseTo(1 / 64, 9);
    expect(trwStep(s, 1, 0, upper, lower)).toBe(-1);
    expect(s.trwLog).toBe(0);
  });

  it('maps --alpha to the upper threshold as beta / alpha, never below the paper value (common practice, no source)', () => {
    expect(Math.exp(thresholdsFor(0.001).trwLogUpper)).toBeCloseTo(990, 6);
    expect(Math.exp(thresholdsFor(0.05).trwLogUpper)).toBeCloseTo(99, 6);
    expect(thresholdsFor(0.0001).z).toBeGreaterThan(thresholdsFor(0.001).z);
  });
});
