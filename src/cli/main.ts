#!/usr/bin/env node
import { Command, CommanderError } from 'commander';
import { CliError, EXIT_USAGE } from './exit.js';

/**
 * Command modules by name, in help order. A run loads only the module of the command it names (a
 * `flows` or `replay` run does not load the report, the collector or the state store); `--help`, no
 * command or an unknown one load them all.
 */
type Module = Promise<{ register(program: Command): void }>;
const COMMANDS: [name: string, load: () => Module][] = [
  ['flows', () => import('./flows.js')],
  ['replay', () => import('./replay.js')],
  ['eval', () => import('./eval.js')],
  ['demo', () => import('./demo.js')],
  ['report', () => import('./report.js')],
  ['rules', () => import('./rules.js')],
  ['train', () => import('./train.js')],
  ['alerts', () => import('./alerts.js')],
  ['label', () => import('./label.js')],
  ['labels', () => import('./label.js')],
  ['watch', () => import('./watch.js')],
];

const program = new Command();
program
  .name('tidewatch')
  .description('Network traffic anomaly sensor: captures and flow exports in, per-host anomaly alerts out.\n'
    + 'Alerts are advisory and need human review; run it only on networks you are authorised to monitor.')
  .version('0.1.0')
  .showHelpAfterError()
  .exitOverride();

const named = COMMANDS.find(([name]) => name === process.argv[2]);
const modules = new Set(named ? [named[1]] : COMMANDS.map(([, load]) => load));
// label.js registers both label and labels: each module once
const loaded = new Set<unknown>();
for (const load of modules) {
  const m = await load();
  if (loaded.has(m)) continue;
  loaded.add(m);
  m.register(program);
}

async function run(): Promise<void> {
  try {
    await program.parseAsync(process.argv);
  } catch (e) {
    if (e instanceof CommanderError) {
      process.exitCode = e.exitCode === 0 ? 0 : EXIT_USAGE;
      return;
    }
    if (e instanceof CliError) {
      process.stderr.write(`tidewatch: ${e.message}\n`);
      process.exitCode = e.exitCode;
      return;
    }
    throw e;
  }
}

await run();
