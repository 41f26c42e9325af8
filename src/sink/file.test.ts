import { existsSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { RotatingFileSink } from './file.js';

const dir = () => mkdtempSync(join(tmpdir(), 'tw-file-'));

describe('RotatingFileSink', () => {
  it('appends to an existing file and makes lines durable on sync()', () => {
    const path = join(dir(), 'alerts.jsonl');
    writeFileSync(path, 'old\n');
    const f = new RotatingFileSink(path);
    f.writeLine('new');
    expect(readFileSync(path, 'utf8')).toBe('old\n'); // still buffered
    f.sync();
    expect(readFileSync(path, 'utf8')).toBe('old\nnew\n');
    f.close();
  });

  it('rotates by size to FILE.1 .. FILE.keep, never splitting a line', () => {
    const path = join(dir(), 'alerts.jsonl');
    const f = new RotatingFileSink(path, { maxBytes: 100, keep: 2, chunkBytes: 32 });
    const lines = Array.from({ length: 40 }, (_, i) => `{"n":${String(i).padStart(3, '0')}}`); // 10 bytes with \n
    for (const l of lines) f.writeLine(l);
    f.close();
    const read = (p: string) => readFileSync(p, 'utf8').split('\n').filter(Boolean);
    const current = read(path);
    const one = read(`${path}.1`);
    const two = read(`${path}.2`);
    expect(existsSync(`${path}.3`)).toBe(false);
    expect([...two, ...one, ...current]).toEqual(lines.slice(lines.length - two.length - one.length - current.length));
    for (const p of [path, `${path}.1`, `${path}.2`]) expect(readFileSync(p).length).toBeLessThanOrEqual(100);
    expect(one).toHaveLength(10); // 10 lines of 10 bytes fill 100 exactly
    expect(f.rotations).toBe(3);
  });
});
