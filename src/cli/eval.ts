import type { Command } from 'commander';

/** `tidewatch eval`: not built yet. */
export function register(program: Command): void {
  program.command('eval').description('(eval: under construction)').action(() => {
    process.stderr.write('tidewatch eval: not built yet\n');
    process.exitCode = 2;
  });
}
