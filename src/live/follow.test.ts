import { appendFileSync, mkdtempSync, renameSync, rmSync, truncateSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import type { FlowRecord } from '../flow/record.js';
import { FileFollower } from './follow.js';

// Rotation by rename-and-create and truncation in place are the two ways log rotators replace a log
// (common practice, no source). Each generation is read by the flow-log file readers.
const dir = mkdtempSync(join(tmpdir(), 'tidewatch-follow-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const line = (i: number) => `${JSON.stringify({ start: 1_773_133_200_000 + i, end: 1_773_133_200_500 + i, proto: 6, src: '192.0.2.1', dst: '198.51.100.2', sport: 40000 + i, dport: 443, pkts: 1, bytes: 60 })}\n`;
const csvHead = 'start,end,proto,src,dst,sport,dport,pkts,bytes\n';
const csvLine = (i: number) => `${1_773_133_200_000 + i},${1_773_133_200_500 + i},17,192.0.2.1,198.51.100.2,${50000 + i},53,1,80\n`;

async function until(what: string, ok: () => boolean): Promise<void> {
  const end = Date.now() + 5000;
  while (!ok()) {
    if (Date.now() > end) throw new Error(`timed out: ${what}`);
    await new Promise((r) => setTimeout(r, 10));
  }
}

describe('FileFollower', () => {
  it('reads what is there, then what is appended, across rotation (rename + new file) and truncation', async () => {
    const f = join(dir, 'flows.jsonl');
    writeFileSync(f, line(0) + line(1));
    const got: FlowRecord[] = [];
    const restarts: string[] = [];
    const fol = new FileFollower(f, (r) => got.push(r), { windowMs: 60_000, pollMs: 10, onRestart: (w) => restarts.push(w) });
    const run = fol.run();
    await until('the first two', () => got.length === 2);
    appendFileSync(f, line(2));
    // a line written in two pieces is read once whole
    appendFileSync(f, line(3).slice(0, 20));
    await until('the appended one', () => got.length === 3);
    appendFileSync(f, line(3).slice(20));
    await until('the split one', () => got.length === 4);
    // rotation: the writer's last line lands in the old file after the rename, then a new file starts
    renameSync(f, `${f}.1`);
    appendFileSync(`${f}.1`, line(4));
    writeFileSync(f, line(5));
    await until('old file finished, new one read', () => got.length === 6);
    // truncation in place, then new content
    truncateSync(f, 0);
    await until('truncation seen', () => restarts.length === 2);
    appendFileSync(f, line(6));
    await until('after truncation', () => got.length === 7);
    fol.stop();
    await run;
    expect(got.map((r) => r.sport)).toEqual([40000, 40001, 40002, 40003, 40004, 40005, 40006]);
    expect(restarts).toEqual(['rotated', 'truncated']);
    expect(fol.stats).toMatchObject({ files: 3, rotations: 1, truncations: 1, records: 7, problems: 0 });
  });

  it('a rotated CSV file starts with its header again; a missing file is waited for', async () => {
    const f = join(dir, 'flows.csv');
    const got: FlowRecord[] = [];
    const problems: string[] = [];
    const fol = new FileFollower(f, (r) => got.push(r), { windowMs: 60_000, pollMs: 10, onProblem: (p) => problems.push(p.reason) });
    const run = fol.run();
    await until('missing file reported', () => problems.length === 1);
    writeFileSync(f, csvHead + csvLine(0));
    await until('the file opened', () => fol.stats.files === 1);
    renameSync(f, `${f}.1`);
    writeFileSync(f, csvHead + csvLine(1));
    // the CSV reader (csv-parse) hands over a record once it sees the next byte or the end: the old
    // generation's last record comes out at the rotation, the new one's at stop
    await until('record of the rotated file', () => got.length === 1);
    // stop only once the new generation is open: a stop before that ends the run without it
    await until('the new file opened', () => fol.stats.files === 2);
    fol.stop();
    await run;
    expect(got.map((r) => r.sport)).toEqual([50000, 50001]);
    expect(problems).toEqual(['cannot-open']);
  });
});
