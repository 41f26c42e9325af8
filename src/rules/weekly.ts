/** Weekly time ranges in a named IANA time zone (maintenance windows). */

export const WEEKDAYS = ['mon', 'tue', 'wed', 'thu', 'fri', 'sat', 'sun'] as const;
const FULL_NAMES = ['monday', 'tuesday', 'wednesday', 'thursday', 'friday', 'saturday', 'sunday'];
const MINUTES_PER_DAY = 1440;
export const MINUTES_PER_WEEK = 7 * MINUTES_PER_DAY;

/** Minutes of the week [start, end), Monday 00:00 = 0; never wraps (a wrapping range is split). */
export interface WeekSpan { start: number; end: number }

/** 0 = Monday; accepts `mon` or `monday` in any case. */
export function parseWeekday(s: string): number | null {
  const t = s.trim().toLowerCase();
  const i = WEEKDAYS.indexOf(t as (typeof WEEKDAYS)[number]);
  return i >= 0 ? i : FULL_NAMES.indexOf(t) >= 0 ? FULL_NAMES.indexOf(t) : null;
}

/** `HH:MM` to minutes of the day; `24:00` only when `allowEnd` (the end of a day). */
export function parseClock(s: string, allowEnd: boolean): number | null {
  const m = /^(\d\d):(\d\d)$/.exec(s.trim());
  if (!m) return null;
  const h = Number(m[1]), min = Number(m[2]);
  if (h === 24 && min === 0 && allowEnd) return MINUTES_PER_DAY;
  if (h > 23 || min > 59) return null;
  return h * 60 + min;
}

/**
 * The spans of one range on one day: `from` to `to` on that day, or, when `to` is not after `from`,
 * on into the next day (Sunday's night runs into Monday morning).
 */
export function daySpans(day: number, from: number, to: number): WeekSpan[] {
  const start = day * MINUTES_PER_DAY + from;
  const end = day * MINUTES_PER_DAY + (to > from ? to : to + MINUTES_PER_DAY);
  if (end <= MINUTES_PER_WEEK) return [{ start, end }];
  return [{ start, end: MINUTES_PER_WEEK }, { start: 0, end: end - MINUTES_PER_WEEK }];
}

export function spansOverlap(a: WeekSpan, b: WeekSpan): boolean {
  return a.start < b.end && b.start < a.end;
}

export function clockText(m: number): string {
  return `${String(Math.floor(m / 60)).padStart(2, '0')}:${String(m % 60).padStart(2, '0')}`;
}

/** True when Intl knows the zone (Node 20 ships full ICU). */
export function isTimeZone(zone: string): boolean {
  try {
    new Intl.DateTimeFormat(undefined, { timeZone: zone });
    return true;
  } catch {
    return false;
  }
}

const SHORT_DAYS = ['Mon', 'Tue', 'Wed', 'Thu', 'Fri', 'Sat', 'Sun'];

/** Minute of the week of an instant in a zone; one formatter per zone. */
export class ZoneClock {
  private readonly fmt: Intl.DateTimeFormat;
  constructor(readonly zone: string) {
    this.fmt = new Intl.DateTimeFormat('en-US', {
      timeZone: zone, weekday: 'short', hour: '2-digit', minute: '2-digit', hourCycle: 'h23',
    });
  }

  minuteOfWeek(ms: number): number {
    let day = 0, hour = 0, minute = 0;
    for (const p of this.fmt.formatToParts(ms)) {
      if (p.type === 'weekday') day = SHORT_DAYS.indexOf(p.value);
      else if (p.type === 'hour') hour = Number(p.value);
      else if (p.type === 'minute') minute = Number(p.value);
    }
    return day * MINUTES_PER_DAY + hour * 60 + minute;
  }
}

/** A maintenance window: weekly spans in one zone. */
export class Weekly {
  private readonly clock: ZoneClock;
  constructor(zone: string, readonly spans: readonly WeekSpan[]) {
    this.clock = new ZoneClock(zone);
  }

  covers(ms: number): boolean {
    const m = this.clock.minuteOfWeek(ms);
    return this.spans.some((s) => m >= s.start && m < s.end);
  }
}
