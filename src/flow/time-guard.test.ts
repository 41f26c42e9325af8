import { describe, expect, it } from 'vitest';
import { ForwardJumpGuard, MAX_FORWARD_JUMP_MS, outlierProblem } from './time-guard.js';

// The corrupt-timestamp guard of the capture path (ours: common practice, no source). Packets are
// one-byte buffers whose byte names them; times in ms.
const DAY = 86_400_000, T = Date.UTC(2026, 2, 10, 9);

function run(times: number[]) {
  const taken: [number, number][] = [];
  const dropped: [number, number, number][] = [];
  const g = new ForwardJumpGuard((buf, off, _len, _link, ts) => taken.push([buf[off]!, ts]), (ts, latest, off) => dropped.push([ts, latest, off]));
  const reused = new Uint8Array(1); // the reader reuses its buffer: a held packet must be a copy
  times.forEach((t, i) => { reused[0] = i; g.packet(reused, 0, 1, 1, t, 100 * i); });
  g.finish();
  return { taken, dropped, outliers: g.outliers };
}

describe('ForwardJumpGuard', () => {
  it('drops one packet dated a year ahead when the next is back at the capture time, and reports its offset', () => {
    const r = run([T, T + 1000, T + 365 * DAY, T + 2000, T + 3000]);
    expect(r.taken).toEqual([[0, T], [1, T + 1000], [3, T + 2000], [4, T + 3000]]);
    expect(r.dropped).toEqual([[T + 365 * DAY, T + 1000, 200]]);
    expect(r.outliers).toBe(1);
  });

  it('takes a real pause: the packet after the jump is past it too', () => {
    const later = T + 3 * DAY;
    const r = run([T, T + 1000, later, later + 10, later + 20]);
    expect(r.taken.map(([i]) => i)).toEqual([0, 1, 2, 3, 4]);
    expect(r.outliers).toBe(0);
  });

  it('takes a jump of less than a day, and a packet still held at the end of input', () => {
    expect(run([T, T + MAX_FORWARD_JUMP_MS - 1, T + 2000]).taken.map(([i]) => i)).toEqual([0, 1, 2]);
    expect(run([T, T + 1000, T + 30 * DAY]).taken).toEqual([[0, T], [1, T + 1000], [2, T + 30 * DAY]]);
  });

  it('an outlier followed by another far jump: the second is judged by the next packet in turn', () => {
    const r = run([T, T + 400 * DAY, T + 1000, T + 900 * DAY, T + 900 * DAY + 5]);
    expect(r.taken.map(([i]) => i)).toEqual([0, 2, 3, 4]);
    expect(r.outliers).toBe(1);
  });

  it('names the file, the offset and the size of the jump in one line', () => {
    const p = outlierProblem('cap.pcap', T + 365 * DAY, T, 4096);
    expect(p).toMatchObject({ file: 'cap.pcap', offset: 4096, reason: 'timestamp-outlier', fatal: false });
    expect(p.message).toMatch(/^packet dated 2027-03-10T09:00:00.000Z, 365 days past the capture's time \(2026-03-10T09:00:00.000Z\)/);
    expect(p.message).not.toContain('\n');
  });
});
