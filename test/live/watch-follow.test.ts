import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { flowLogLine, LOG_T0, readStatus, startCli, waitFor } from './helpers.js';

// watch --follow on a flow log that stops growing: the windows close by wall-clock idleness alone
// (issue 6: "windows also close on wall-clock idleness"); SIGHUP reloads the rules, refusing an
// invalid set and keeping the one in force (docs/rules.md, "Reload").
const dir = mkdtempSync(join(tmpdir(), 'tidewatch-live-follow-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const T = LOG_T0;
const line = flowLogLine;

describe('watch --follow', () => {
  it('closes windows on idleness without more data, reloads rules on SIGHUP and refuses an invalid set', async () => {
    const log = join(dir, 'flows.jsonl'), status = join(dir, 'status.json'), rules = join(dir, 'rules');
    writeFileSync(log, Array.from({ length: 20 }, (_, i) => line(i)).join(''));
    const ruleFile = join(rules, 'scan.yaml');
    mkdirSync(rules);
    writeFileSync(ruleFile, 'rules:\n  - id: vertical-scan\n    detector: vertical-scan\n    enabled: true\n');
    const w = startCli(['watch', '--follow', log, '--window', '1s', '--lateness', '0s', '--idle-after', '200ms',
      '--status-json', status, '--status-interval', '100ms', '--rules', rules, '--internal', '10.60.0.0/16']);
    try {
      const s = await waitFor('a window closed by idleness', () => {
        const x = readStatus(status);
        return x && x.records === 20 && x.windows_closed >= 1 ? x : null;
      });
      // event time moved past the data (the last record ends at T + 195 ms)
      expect(Date.parse(s.event_time!)).toBeGreaterThan(T + 1000);
      writeFileSync(ruleFile, 'rules:\n  - id: vertical-scan\n    detector: no-such-detector\n');
      w.child.kill('SIGHUP');
      await waitFor('the refusal', () => readStatus(status)?.rules.refused === 1);
      expect(w.stderr()).toMatch(/SIGHUP: rule set refused \(1 errors?\)/);
      writeFileSync(ruleFile, 'rules:\n  - id: vertical-scan\n    detector: vertical-scan\n    enabled: false\n');
      w.child.kill('SIGHUP');
      await waitFor('the reload', () => readStatus(status)?.rules.reloads === 1);
      expect(w.stderr()).toMatch(/SIGHUP: rules OK: 1 file, 1 rule \(disabled: vertical-scan\)/);
      w.child.kill('SIGINT');
      expect(await w.exited).toBe(0);
      expect(readStatus(status)!.final).toBe(true);
    } finally {
      w.child.kill('SIGKILL');
    }
  }, 20_000);
});
