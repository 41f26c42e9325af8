import { closeSync, mkdtempSync, openSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Writable } from 'node:stream';
import { describe, expect, it } from 'vitest';
import { JsonlWriter } from './jsonl.js';

/** A slow sink with a tiny highWaterMark, so write() returns false and 'drain' matters. */
function slowSink() {
  const chunks: Buffer[] = [];
  let writes = 0;
  const w = new Writable({
    highWaterMark: 64,
    write(chunk: Buffer, _enc, cb) {
      writes++;
      chunks.push(chunk);
      setTimeout(cb, 1);
    },
  });
  return { w, text: () => Buffer.concat(chunks).toString('utf8'), writes: () => writes };
}

describe('JsonlWriter', () => {
  it('writes lines in big chunks, honouring backpressure, and flush() waits for the stream', async () => {
    const s = slowSink();
    const j = new JsonlWriter(s.w, { chunkBytes: 4096 });
    const lines = Array.from({ length: 2000 }, (_, i) => JSON.stringify({ i, text: 'é'.repeat(i % 7) }));
    for (const l of lines) j.writeLine(l);
    await j.flush();
    expect(s.text()).toBe(`${lines.join('\n')}\n`); // JSON Lines: \n after every value (jsonlines.org)
    expect(s.writes()).toBeLessThan(40); // ~40 kB in 4 kB chunks, not one write per line
    expect(j.lines).toBe(2000);
    expect(j.bytes).toBe(Buffer.byteLength(s.text()));
    await j.close();
    expect(s.w.writableEnded).toBe(true);
  });

  it('passes a line longer than the chunk through whole and in order', async () => {
    const s = slowSink();
    const j = new JsonlWriter(s.w, { chunkBytes: 16 });
    j.writeLine('a');
    j.writeLine('x'.repeat(100));
    j.writeLine('b');
    await j.close();
    expect(s.text()).toBe(`a\n${'x'.repeat(100)}\nb\n`);
  });

  it('writes to a file descriptor', async () => {
    const path = join(mkdtempSync(join(tmpdir(), 'tw-jsonl-')), 'out.jsonl');
    const fd = openSync(path, 'w');
    const j = new JsonlWriter(fd);
    j.writeLine('{"a":1}');
    await j.close();
    closeSync(fd);
    expect(readFileSync(path, 'utf8')).toBe('{"a":1}\n');
  });

  it('reports a stream error from flush()', async () => {
    const w = new Writable({ write(_c, _e, cb) { cb(new Error('disk full')); } });
    const j = new JsonlWriter(w);
    j.writeLine('x');
    await expect(j.flush()).rejects.toThrow('disk full');
  });
});
