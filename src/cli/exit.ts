/** Exit codes (DESIGN.md section 5). */
export const EXIT_OK = 0;
export const EXIT_ALERTS = 1;
export const EXIT_USAGE = 2;
export const EXIT_INPUT = 3;

/** A failure the CLI reports as one line on stderr and turns into an exit code. */
export class CliError extends Error {
  constructor(message: string, readonly exitCode: number) {
    super(message);
  }
}

export function usageError(message: string): CliError {
  return new CliError(message, EXIT_USAGE);
}

export function inputError(message: string): CliError {
  return new CliError(message, EXIT_INPUT);
}
