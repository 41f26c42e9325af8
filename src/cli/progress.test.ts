import { Writable } from 'node:stream';
import { afterEach, describe, expect, it, vi } from 'vitest';
import { Progress, barLine, clock, plainLine, type ProgressSource } from './progress.js';

const MB = 1_000_000;
const src = (done: number, size: number): ProgressSource => ({ name: 'big.pcap', size, consumed: () => done });

/** A stream that records what was written; `isTTY` as asked. */
function sink(tty: boolean): { stream: NodeJS.WriteStream; text: () => string } {
  const chunks: string[] = [];
  const w = new Writable({ write(c, _e, cb) { chunks.push(String(c)); cb(); } }) as unknown as NodeJS.WriteStream;
  Object.assign(w, { isTTY: tty, columns: 100 });
  return { stream: w, text: () => chunks.join('') };
}

afterEach(() => { vi.useRealTimers(); });

describe('progress lines', () => {
  it('a terminal line has the bar, share, bytes, rate and time left', () => {
    // 120 MB of 240 MB in 2 s: 60 MB/s, 2 s to go
    expect(barLine(src(120 * MB, 240 * MB), 2000, 100)).toBe('big.pcap [===========>            ]  50%  120 MB / 240 MB  60 MB/s  ETA 0:02');
    expect(barLine(src(240 * MB, 240 * MB), 4000, 100)).toContain('[========================] 100%');
  });

  it('the plain line reads as a sentence; unknown sizes (stdin) show bytes and rate only', () => {
    expect(plainLine(src(30 * MB, 120 * MB), 10_000)).toBe('big.pcap: 30 MB of 120 MB read (25%), 3.0 MB/s, 0:30 left');
    expect(plainLine(src(30 * MB, -1), 10_000)).toBe('big.pcap: 30 MB read, 3.0 MB/s');
    expect(barLine(src(30 * MB, -1), 10_000, 100)).toBe('big.pcap  30 MB  3.0 MB/s');
  });

  it('a long name is cut from the left so the line never wraps', () => {
    const long: ProgressSource = { name: `/captures/${'x'.repeat(200)}.pcap`, size: 10, consumed: () => 5 };
    const line = barLine(long, 1000, 60);
    expect(line.length).toBe(59);
    expect(line.endsWith('ETA 0:01')).toBe(true);
  });

  it('clock', () => {
    expect([0, 59_400, 61_000, 3_725_000, Number.NaN].map(clock)).toEqual(['0:00', '0:59', '1:01', '1:02:05', '?']);
  });
});

describe('Progress', () => {
  it('on a terminal redraws one line in place at most four times a second and wipes it at the end', () => {
    vi.useFakeTimers();
    const out = sink(true);
    let done = 0;
    const p = new Progress({ quiet: false, stream: out.stream, now: () => Date.now() });
    p.watch({ name: 'a.pcap', size: 100 * MB, consumed: () => done });
    done = 10 * MB;
    vi.advanceTimersByTime(1000);
    expect(out.text().split('\r\x1b[K').filter(Boolean)).toHaveLength(4);
    p.stop();
    expect(out.text().endsWith('\r\x1b[K')).toBe(true);
    vi.advanceTimersByTime(1000);
    expect(out.text().split('\r\x1b[K').filter(Boolean)).toHaveLength(4);
  });

  it('elsewhere writes a plain line every few seconds; quiet writes nothing', () => {
    vi.useFakeTimers();
    const out = sink(false), quiet = sink(false);
    const p = new Progress({ quiet: false, stream: out.stream, now: () => Date.now() });
    const q = new Progress({ quiet: true, stream: quiet.stream });
    p.watch(src(5 * MB, 10 * MB));
    q.watch(src(5 * MB, 10 * MB));
    vi.advanceTimersByTime(10_500);
    p.stop(); q.stop();
    expect(out.text().split('\n').filter(Boolean)).toEqual([
      'tidewatch: big.pcap: 5.0 MB of 10 MB read (50%), 1.0 MB/s, 0:05 left',
      'tidewatch: big.pcap: 5.0 MB of 10 MB read (50%), 500 kB/s, 0:10 left',
    ]);
    expect(quiet.text()).toBe('');
  });
});
