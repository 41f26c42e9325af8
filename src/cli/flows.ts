import type { Command } from 'commander';

/** `tidewatch flows`: not built yet. */
export function register(program: Command): void {
  program.command('flows').description('(flows: under construction)').action(() => {
    process.stderr.write('tidewatch flows: not built yet\n');
    process.exitCode = 2;
  });
}
