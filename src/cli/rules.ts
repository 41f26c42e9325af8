import type { Command } from 'commander';
import { loadRules, shippedRulesDir } from '../rules/load.js';
import type { RuleSet } from '../rules/ruleset.js';
import { CliError, EXIT_USAGE } from './exit.js';
import { escapeControls } from '../sink/console.js';

/**
 * The rule set for a command's `--rules PATH` (default: the shipped rules/). An invalid set stops the
 * command before it reads any input: exit 2 with every `file:line:column: reason`.
 */
export function rulesFromOption(path: string | undefined): RuleSet {
  const r = loadRules(path ?? shippedRulesDir());
  if ('errors' in r) throw new CliError(`invalid rule set (${countText(r.errors.length, 'error')}):\n${r.errors.map(escapeControls).join('\n')}`, EXIT_USAGE);
  return r.ok;
}

/** One line: what the set holds. */
export function summarise(rules: RuleSet): string {
  const own = rules.rules;
  const off = own.filter((r) => !r.enabled).map((r) => r.id);
  const builtIn = rules.enabledKinds().filter((k) => !own.some((r) => r.detector === k));
  const allow = own.reduce((n, r) => n + (r.allow?.size ?? 0), 0) + rules.globalAllowEntries();
  const windows = own.filter((r) => r.maintenance).length + rules.globalMaintenanceWindows();
  const subnets = own.reduce((n, r) => n + r.subnets.length, 0);
  const l = rules.severityLimits;
  return `rules OK: ${countText(rules.files.length, 'file')}, ${countText(own.length, 'rule')}`
    + `${off.length ? ` (disabled: ${off.join(', ')})` : ''}`
    + `${builtIn.length ? `, built-in defaults for ${builtIn.join(', ')}` : ''}`
    + `; ${countText(allow, 'allowlist entry', 'allowlist entries')}, ${countText(windows, 'maintenance window')}, `
    + `${countText(subnets, 'subnet override')}; severity ${l.medium}/${l.high}/${l.critical}; `
    + `inside ${rules.inside ? rules.inside.join(',') : 'not set (built-in default)'}`;
}

function countText(n: number, one: string, many = `${one}s`): string {
  return `${n} ${n === 1 ? one : many}`;
}

/** `tidewatch rules check [PATH]`: validates a rule file or folder. */
export function register(program: Command): void {
  const rules = program.command('rules').description('rule files: validate');
  rules
    .command('check')
    .description('validate a rule file or folder (default: the shipped rules/); exit 2 on any error')
    .argument('[path]', 'rule file (.yaml, .yml, .json) or folder of them')
    .action((path: string | undefined) => {
      const r = loadRules(path ?? shippedRulesDir());
      if ('errors' in r) {
        // messages quote the file's own text: one line each, nothing a terminal would act on
        for (const e of r.errors) process.stdout.write(`${escapeControls(e)}\n`);
        process.stderr.write(`tidewatch: invalid rule set (${countText(r.errors.length, 'error')})\n`);
        process.exitCode = EXIT_USAGE;
        return;
      }
      process.stdout.write(`${summarise(r.ok)}\n`);
    });
}
