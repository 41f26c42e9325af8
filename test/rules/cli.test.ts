import { spawnSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';

// Runs the compiled CLI as users do (npm test builds first).
const cli = new URL('../../dist/src/cli/main.js', import.meta.url).pathname;
const run = (...args: string[]) => spawnSync('node', [cli, ...args], { encoding: 'utf8' });

describe('tidewatch rules check', () => {
  it('the shipped set: a one-line OK summary, exit 0', () => {
    const r = run('rules', 'check');
    expect(r.status).toBe(0);
    expect(r.stdout).toBe('rules OK: 6 files, 6 rules; 0 allowlist entries, 0 maintenance windows, 0 subnet overrides; '
      + 'severity 6/12/25; inside not set (built-in default)\n');
  });

  it('the demo site rules: the summary names what is set', () => {
    const r = run('rules', 'check', 'test/rules/good/larkspur-site.yaml');
    expect(r.status).toBe(0);
    expect(r.stdout).toMatch(/^rules OK: 1 file, 3 rules, built-in defaults for fan-in-flood, horizontal-scan, traffic-shift; 3 allowlist entries, 1 maintenance window, 2 subnet overrides/);
  });

  it('an invalid file: one file:line:column line per error on stdout, exit 2', () => {
    const r = run('rules', 'check', 'test/rules/bad/alias.yaml');
    expect(r.status).toBe(2);
    expect(r.stdout).toBe('test/rules/bad/alias.yaml:2:18: anchors are not allowed in rule files\n'
      + 'test/rules/bad/alias.yaml:7:14: aliases are not allowed in rule files\n');
    expect(r.stderr).toBe('tidewatch: invalid rule set (2 errors)\n');
  });
});

describe('--rules on commands', () => {
  it('replay refuses to start on an invalid set: exit 2, the messages, no alerts', () => {
    const r = run('replay', 'captures/larkspur-demo.pcap', '--rules', 'test/rules/bad/bad-time-zone.yaml');
    expect(r.status).toBe(2);
    expect(r.stdout).toBe('');
    expect(r.stderr).toBe('tidewatch: invalid rule set (1 error):\n'
      + "test/rules/bad/bad-time-zone.yaml:2:9: unknown time zone 'Europe/Atlantis' (expected an IANA name such as Europe/Berlin)\n");
  });

  it('demo refuses too, before generating anything', () => {
    const r = run('demo', '--bundled', '--rules', 'test/rules/bad/bad-weekday.yaml');
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/^tidewatch: invalid rule set \(1 error\):\ntest\/rules\/bad\/bad-weekday.yaml:4:21: bad weekday/);
  });
});
