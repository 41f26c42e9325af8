import type { Command } from 'commander';

/** `tidewatch replay`: not built yet. */
export function register(program: Command): void {
  program.command('replay').description('(replay: under construction)').action(() => {
    process.stderr.write('tidewatch replay: not built yet\n');
    process.exitCode = 2;
  });
}
