/**
 * Entry point of the development benchmark (`npm run bench -- [--quick] [--only CASES]`), bundled and run by
 * `scripts/bench.mjs`. The benchmark is not part of the shipped command line: it carries reference pitch
 * detectors (pitchfinder's YIN, a bare pitchy pass) and the test signals of `test/`, which users never need.
 * Errors print as one line, as the command line's do; exit code 0 when every target is met, 1 when one is
 * missed, 2 on a usage error, 70 on an internal error.
 */
import { CliError, printableMessage } from '../../cli/errors.ts';
import { main } from './bench.ts';

try {
  process.exitCode = await main(process.argv.slice(2));
} catch (err) {
  if (err instanceof CliError) {
    process.stderr.write(`bench: ${printableMessage(err.message)}\n`);
    process.exitCode = err.exitCode;
  } else {
    process.stderr.write(
      `bench: internal error: ${printableMessage(err instanceof Error ? err.message : String(err))}\n`,
    );
    if (process.env.SPANMETER_DEBUG === '1' && err instanceof Error) process.stderr.write(`${err.stack}\n`);
    process.exitCode = 70;
  }
}
