/** A mapping from data values to pixels, with the ticks to draw along it. */
export interface Scale {
  readonly kind: 'linear' | 'log';
  map(v: number): number;
  ticks(): number[];
}

/** Linear scale over [lo, hi] (widened to "nice" tick edges) onto [p0, p1] pixels. */
export function linearScale(lo: number, hi: number, p0: number, p1: number, maxTicks = 5): Scale {
  if (!(hi > lo)) hi = lo + 1;
  const step = niceStep((hi - lo) / maxTicks);
  const a = Math.floor(lo / step) * step;
  const b = Math.ceil(hi / step) * step;
  const k = (p1 - p0) / (b - a);
  return {
    kind: 'linear',
    map: (v) => p0 + (v - a) * k,
    ticks: () => {
      const t: number[] = [];
      for (let v = a; v <= b + step / 2; v += step) t.push(Math.round(v / step) * step);
      return t;
    },
  };
}

/**
 * Log scale for counts that may be zero: position follows log10(1 + v), so 0 sits on the axis and
 * decades (1, 10, 100, ...) are evenly spaced once v is large. Ticks are 0 and powers of ten.
 */
export function logScale(hi: number, p0: number, p1: number): Scale {
  const top = Math.max(1, Math.ceil(Math.log10(1 + Math.max(0, hi))));
  const k = (p1 - p0) / top;
  return {
    kind: 'log',
    map: (v) => p0 + Math.log10(1 + Math.max(0, v)) * k,
    ticks: () => {
      const t = [0];
      const every = top > 6 ? 2 : 1;
      // 1 sits too close to 0 to label once the axis spans several decades
      for (let e = top >= 4 ? every : 0; e <= top; e += every) t.push(10 ** e);
      return t.filter((v) => Math.log10(1 + v) <= top + 1e-9);
    },
  };
}

/** Counts spanning more than this ratio (largest / smallest positive) get a log axis. */
export const LOG_RANGE_RATIO = 100;

/** True when values of a count feature range widely enough that a linear axis would hide the normal. */
export function wantsLog(values: ArrayLike<number>): boolean {
  let min = Infinity, max = 0;
  for (let i = 0; i < values.length; i++) {
    const v = values[i]!;
    if (!(v > 0)) continue;
    if (v < min) min = v;
    if (v > max) max = v;
  }
  return max > 0 && max / min > LOG_RANGE_RATIO;
}

/** 1, 2 or 5 times a power of ten, at least `raw`. */
export function niceStep(raw: number): number {
  if (!(raw > 0)) return 1;
  const p = 10 ** Math.floor(Math.log10(raw));
  const m = raw / p;
  return (m <= 1 ? 1 : m <= 2 ? 2 : m <= 5 ? 5 : 10) * p;
}

const MINUTE = 60_000, HOUR = 3_600_000, DAY = 86_400_000;
const TIME_STEPS = [MINUTE, 2 * MINUTE, 5 * MINUTE, 10 * MINUTE, 15 * MINUTE, 30 * MINUTE,
  HOUR, 2 * HOUR, 3 * HOUR, 6 * HOUR, 12 * HOUR, DAY, 2 * DAY, 7 * DAY];

export interface TimeTick { t: number; label: string }

/**
 * Ticks at round UTC times (whole minutes, hours or days since the epoch) between t0 and t1, at most
 * about `maxTicks`. Labels are HH:MM in UTC; a tick at midnight (or every tick, when steps are days)
 * reads MM-DD instead, so a multi-day axis still says which day.
 */
export function timeTicks(t0: number, t1: number, maxTicks = 8): TimeTick[] {
  const span = Math.max(1, t1 - t0);
  const step = TIME_STEPS.find((s) => span / s <= maxTicks) ?? Math.ceil(span / maxTicks / (7 * DAY)) * 7 * DAY;
  const out: TimeTick[] = [];
  for (let t = Math.ceil(t0 / step) * step; t <= t1; t += step) {
    const iso = new Date(t).toISOString();
    const midnight = t % DAY === 0;
    out.push({ t, label: midnight ? iso.slice(5, 10) : iso.slice(11, 16) });
  }
  return out;
}
