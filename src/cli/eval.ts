import { readFileSync } from 'node:fs';
import type { Command } from 'commander';
import { checkTruth, parseAlertLines, scoreAlerts, type EvalResult } from '../scenario/eval.js';
import type { Truth } from '../scenario/truth.js';
import { formatProblem } from '../util/problem.js';
import { inputError } from './exit.js';

/** `tidewatch eval --truth T.json ALERTS.jsonl [--json]`: scores an alert feed against ground truth. */
export function register(program: Command): void {
  program
    .command('eval')
    .description('score an alert feed (JSON lines) against a scenario truth file: detections, delays, precision, recall')
    .requiredOption('--truth <file>', 'truth JSON written by the scenario generator')
    .argument('<alerts>', 'alert feed, JSON lines (`-` for stdin)')
    .option('--json', 'print the numbers as one JSON object')
    .action((alertsFile: string, opts: { truth: string; json?: boolean }) => {
      const truth = readTruth(opts.truth);
      const { alerts, problems } = parseAlertLines(readText(alertsFile), alertsFile);
      for (const p of problems.slice(0, 20)) process.stderr.write(`tidewatch eval: ${formatProblem(p)}\n`);
      if (problems.length > 20) process.stderr.write(`tidewatch eval: ${problems.length - 20} more bad lines\n`);
      const r = scoreAlerts(truth, alerts);
      process.stdout.write(opts.json ? JSON.stringify({ ...r, bad_lines: problems.length }) + '\n' : renderTable(r));
    });
}

function readText(file: string): string {
  try {
    return readFileSync(file === '-' ? 0 : file, 'utf8');
  } catch (e) {
    throw inputError(`${file}: cannot read (${(e as NodeJS.ErrnoException).code ?? 'error'})`);
  }
}

function readTruth(file: string): Truth {
  let t: unknown;
  try {
    t = JSON.parse(readText(file));
  } catch (e) {
    if (e instanceof SyntaxError) throw inputError(`${file}: not JSON`);
    throw e;
  }
  const bad = checkTruth(t);
  if (bad) throw inputError(`${file}: ${bad}`);
  return t as Truth;
}

export function renderTable(r: EvalResult): string {
  const rows = [['episode', 'family', 'expected', 'result', 'delay', 'alerts']];
  for (const e of r.episodes) {
    rows.push([e.id, e.family, e.kind, e.detected ? 'detected' : 'MISSED', e.delay_s === null ? '-' : `${e.delay_s.toFixed(0)} s`, String(e.alerts.length)]);
  }
  const widths = rows[0]!.map((_, c) => Math.max(...rows.map((row) => row[c]!.length)));
  const lines = rows.map((row) => row.map((cell, c) => cell.padEnd(widths[c]!)).join('  ').trimEnd());
  lines.splice(1, 0, widths.map((w) => '-'.repeat(w)).join('  '));
  const pct = (x: number | null) => (x === null ? 'n/a' : `${(100 * x).toFixed(1)} %`);
  lines.push(
    '',
    `alerts ${r.alerts}: ${r.true_alerts} matched an episode, ${r.explained} explained by an episode (another detector, same hosts and time), `
      + `${r.false_alerts} false (${r.false_benign_period} in benign periods, ${r.false_other} other)`,
    `detected ${r.detected} of ${r.episodes.length} episodes; recall ${pct(r.recall)}, precision ${pct(r.precision)}`,
    `false alerts per 100 host-hours of benign traffic: ${r.false_per_100_host_hours === null ? 'n/a' : r.false_per_100_host_hours.toFixed(2)}`
      + ` (${r.benign_host_hours} host-hours)`,
  );
  return lines.join('\n') + '\n';
}
