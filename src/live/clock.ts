/**
 * Event time for a live run. Time comes from the data (the latest record or packet time seen); when
 * no data has come for `idleAfterMs` of wall-clock time, event time moves on by the wall-clock time
 * elapsed since the last data, so the windows of a link that went quiet still close.
 */
export class IdleClock {
  /** [latest event time seen, wall time when it was seen, event time already advanced to]. */
  private readonly t = Float64Array.of(-Infinity, NaN, -Infinity);
  /** Data seen since the last tick (a flag per record is cheaper than a wall-clock read per record). */
  private fresh = 0;

  constructor(private readonly idleAfterMs: number) {}

  /** A record or packet at event time `ms` arrived (hot path: no allocation, no clock read). */
  note(ms: number): void {
    if (ms > this.t[0]!) this.t[0] = ms;
    this.fresh = 1;
  }

  /**
   * The caller's own advance (after a tick) pushed out records, such as flow updates a flow table cut:
   * they are not new data, so the idle span goes on.
   */
  discardNotes(): void {
    this.fresh = 0;
  }

  /** Latest event time seen from the data (-Infinity before any). */
  get eventMs(): number {
    return Math.max(this.t[0]!, this.t[2]!);
  }

  /**
   * Called on a wall-clock timer. Returns the event time to advance to, or NaN when data is flowing
   * (or none has come yet) and nothing needs to move.
   */
  tick(wallMs: number): number {
    const t = this.t;
    if (this.fresh === 1 || Number.isNaN(t[1]!)) {
      this.fresh = 0;
      if (t[0]! > -Infinity) t[1] = wallMs;
      return NaN;
    }
    const idle = wallMs - t[1]!;
    if (idle < this.idleAfterMs) return NaN;
    const target = t[0]! + idle;
    if (!(target > t[2]!)) return NaN;
    t[2] = target;
    return target;
  }
}
