import type { Command } from 'commander';

/** `tidewatch demo`: not built yet. */
export function register(program: Command): void {
  program.command('demo').description('(demo: under construction)').action(() => {
    process.stderr.write('tidewatch demo: not built yet\n');
    process.exitCode = 2;
  });
}
