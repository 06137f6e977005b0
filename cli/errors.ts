/**
 * An error meant for the person at the command line: its message is printed as one line on stderr,
 * with no stack trace, and the command exits with `exitCode`.
 */
export class CliError extends Error {
  constructor(
    message: string,
    readonly exitCode: number = 1,
  ) {
    super(message);
    this.name = 'CliError';
  }
}
