#!/usr/bin/env node
import { Command, CommanderError } from 'commander';
import { CliError, EXIT_USAGE } from './exit.js';
import { register as registerFlows } from './flows.js';
import { register as registerReplay } from './replay.js';
import { register as registerEval } from './eval.js';
import { register as registerDemo } from './demo.js';
import { register as registerReport } from './report.js';
import { register as registerRules } from './rules.js';
import { register as registerTrain } from './train.js';
import { register as registerAlerts } from './alerts.js';
import { register as registerLabel } from './label.js';
import { register as registerWatch } from './watch.js';

const program = new Command();
program
  .name('tidewatch')
  .description('Network traffic anomaly sensor: captures and flow exports in, per-host anomaly alerts out.\n'
    + 'Alerts are advisory and need human review; run it only on networks you are authorised to monitor.')
  .version('0.1.0')
  .showHelpAfterError()
  .exitOverride();

registerFlows(program);
registerReplay(program);
registerEval(program);
registerDemo(program);
registerReport(program);
registerRules(program);
registerTrain(program);
registerAlerts(program);
registerLabel(program);
registerWatch(program);

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
