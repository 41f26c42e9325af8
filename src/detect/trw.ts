/**
 * Threshold Random Walk (Jung, Paxson, Berger, Balakrishnan, IEEE S&P 2004; METHODS.md 6.1): a
 * sequential likelihood-ratio test over the outcomes of first connection attempts. Each success
 * multiplies Λ by θ1/θ0, each failure by (1 − θ1)/(1 − θ0); Wald's thresholds decide.
 */
export const TRW_THETA0 = 0.8;
export const TRW_THETA1 = 0.2;
const LOG_SUCCESS = Math.log(TRW_THETA1 / TRW_THETA0);
const LOG_FAILURE = Math.log((1 - TRW_THETA1) / (1 - TRW_THETA0));

export interface TrwState {
  trwLog: number;
  trwDecided: 0 | 1 | -1;
}

/**
 * Applies one window's outcomes of attempts to new (peer, port) pairs: `ok` successes and `fail`
 * failures (their order inside a window is not kept). Returns the decision: 1 scanner, -1 benign,
 * 0 pending. A benign decision restarts the walk; the ratio is capped at twice the upper threshold so
 * a host that stops failing comes back down.
 */
export function trwStep(s: TrwState, ok: number, fail: number, logUpper: number, logLower: number): 0 | 1 | -1 {
  if (ok === 0 && fail === 0) return s.trwDecided;
  s.trwLog += fail * LOG_FAILURE + ok * LOG_SUCCESS;
  if (s.trwLog >= logUpper) {
    s.trwDecided = 1;
    s.trwLog = Math.min(s.trwLog, 2 * logUpper);
  } else if (s.trwLog <= logLower) {
    s.trwDecided = -1;
    s.trwLog = 0;
  } else {
    s.trwDecided = 0;
  }
  return s.trwDecided;
}
