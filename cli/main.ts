/**
 * `spanmeter <command> [args]`: the command-line entry point.
 *
 * Each command lives in its own module exporting `main(args): Promise<number>` and is loaded on demand.
 * Errors meant for the user are {@link CliError}s, printed as one line on stderr
 * (`spanmeter analyze: <message>`) with the error's exit code; anything else is an internal error, printed
 * as `spanmeter: internal error: <message>` with exit code 70 (and its stack when SPANMETER_DEBUG=1).
 */
import { pathToFileURL } from 'node:url';
import { EXIT_INTERNAL, EXIT_USAGE } from './args.ts';
import { CliError, printableMessage } from './errors.ts';

type CommandMain = (args: string[]) => Promise<number>;

interface Command {
  /** One line for the overview. */
  readonly summary: string;
  /** Load the command's module (a literal path each, so the bundler includes it). */
  readonly load: () => Promise<{ main: CommandMain }>;
}

/** The commands, in the order the help lists them. */
export const COMMANDS: Readonly<Record<string, Command>> = {
  analyze: {
    summary: 'measure the pitch of a recorded oscillator in a WAV file',
    load: () => import('./analyze.ts'),
  },
  simulate: {
    summary: 'write test recordings from a simulated oscillator',
    load: () => import('./simulate.ts'),
  },
  book: { summary: 'back up, restore or list the unit book', load: () => import('./book.ts') },
};

/** The overview printed by `spanmeter --help`. */
export function usage(): string {
  const width = Math.max(...Object.keys(COMMANDS).map((c) => c.length)) + 2;
  const lines = Object.entries(COMMANDS).map(([name, c]) => `  ${name.padEnd(width)}${c.summary}`);
  return [
    'usage: spanmeter <command> [args]',
    '',
    'commands:',
    ...lines,
    '',
    "Run 'spanmeter <command> --help' for a command's options.",
  ].join('\n');
}

/** Where output goes; the process's streams by default, replaceable in tests. */
export interface Output {
  readonly stdout: (text: string) => void;
  readonly stderr: (text: string) => void;
}

const processOutput: Output = {
  stdout: (t) => process.stdout.write(t),
  stderr: (t) => process.stderr.write(t),
};

/** A CliError, also when thrown by a second copy of the class (a test's module graph, another bundle). */
function isCliError(err: unknown): err is CliError {
  return (
    err instanceof CliError ||
    (err instanceof Error && err.name === 'CliError' && typeof (err as CliError).exitCode === 'number')
  );
}

/**
 * Run the command line and return the exit code. Never throws.
 *
 * @param argv - Arguments after the program name: `['analyze', 'vco.wav', '--json']`.
 * @param out - Where the dispatcher writes its own messages (commands write to the process's stdout).
 * @example await run(['--help']) // 0, after printing the overview on stdout
 */
export async function run(argv: readonly string[], out: Output = processOutput): Promise<number> {
  const [name, ...rest] = argv;
  if (name === undefined) {
    out.stderr(`${usage()}\n`);
    return EXIT_USAGE;
  }
  if (name === '--help' || name === '-h' || name === 'help') {
    out.stdout(`${usage()}\n`);
    return 0;
  }
  const command = Object.hasOwn(COMMANDS, name) ? COMMANDS[name] : undefined;
  if (!command) {
    const what = name.startsWith('-') ? `unknown option '${name}'` : `unknown command '${name}'`;
    out.stderr(
      `spanmeter: ${printableMessage(what)}; commands are ${Object.keys(COMMANDS).join(', ')} (see spanmeter --help)\n`,
    );
    return EXIT_USAGE;
  }
  try {
    const mod = await command.load();
    return await mod.main(rest);
  } catch (err) {
    if (isCliError(err)) {
      out.stderr(`spanmeter ${name}: ${printableMessage(err.message)}\n`);
      return err.exitCode;
    }
    const message = err instanceof Error ? err.message : String(err);
    out.stderr(`spanmeter: internal error: ${printableMessage(message)}\n`);
    if (process.env.SPANMETER_DEBUG === '1' && err instanceof Error && err.stack)
      out.stderr(`${err.stack}\n`);
    return EXIT_INTERNAL;
  }
}

// Run when this file (or the bundle built from it) is the program itself, not when it is imported.
if (process.argv[1] !== undefined && import.meta.url === pathToFileURL(process.argv[1]).href) {
  void run(process.argv.slice(2)).then((code) => {
    process.exitCode = code;
  });
}
