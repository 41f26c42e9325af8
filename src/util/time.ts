/** RFC 3339 UTC with exactly three fractional digits (DESIGN.md section 4, METHODS.md 8.3). */
export function rfc3339(ms: number): string {
  return new Date(Math.floor(ms)).toISOString();
}

/** Parses RFC 3339 (any offset, lower-case t/z accepted); NaN when not a date-time. */
export function parseRfc3339(s: string): number {
  const m = /^(\d{4})-(\d{2})-(\d{2})[Tt ](\d{2}):(\d{2}):(\d{2})(\.\d+)?([Zz]|[+-]\d{2}:\d{2})$/.exec(s);
  if (!m) return NaN;
  const t = Date.parse(s.toUpperCase().replace(' ', 'T'));
  return Number.isFinite(t) ? t + (m[7] ? (Number(m[7]) * 1000) % 1 : 0) : NaN;
}

/** Parses durations such as `60`, `60s`, `5m`, `1h`, `250ms` into milliseconds; NaN when invalid. */
export function parseDuration(s: string): number {
  const m = /^(\d+(?:\.\d+)?)(ms|s|m|h|d)?$/.exec(s.trim());
  if (!m) return NaN;
  const v = Number(m[1]);
  switch (m[2]) {
    case 'ms': return v;
    case 'm': return v * 60_000;
    case 'h': return v * 3_600_000;
    case 'd': return v * 86_400_000;
    default: return v * 1000;
  }
}
