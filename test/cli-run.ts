// Runs the command line as a user would, for the CLI tests.
import { spawnSync } from 'node:child_process';
import { join } from 'node:path';

/** The project's root folder. */
export const ROOT = join(import.meta.dirname, '..');

/** What a command printed and how it ended. */
export interface Ran {
  readonly code: number | null;
  readonly stdout: string;
  readonly stderr: string;
}

/** Run `node scripts/run-cli.mjs …args` (exactly what `npm run analyze -- …` runs). */
export function cli(...args: string[]): Ran {
  const r = spawnSync(process.execPath, [join(ROOT, 'scripts', 'run-cli.mjs'), ...args], {
    cwd: ROOT,
    encoding: 'utf8',
    env: { ...process.env, SPANMETER_DEBUG: '' },
    timeout: 60_000,
  });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

/**
 * Run the command line in this process through `run()` (cli/main.ts), capturing what it writes to stdout
 * and stderr: the same code as the real program without a process start, so tests stay quick.
 */
export async function cliInProcess(...args: string[]): Promise<Ran & { readonly ms: number }> {
  const { run } = await import('../cli/main.ts');
  let stdout = '';
  let stderr = '';
  const realOut = process.stdout.write.bind(process.stdout);
  const realErr = process.stderr.write.bind(process.stderr);
  process.stdout.write = ((chunk: string | Uint8Array) => {
    stdout += String(chunk);
    return true;
  }) as typeof process.stdout.write;
  process.stderr.write = ((chunk: string | Uint8Array) => {
    stderr += String(chunk);
    return true;
  }) as typeof process.stderr.write;
  const t0 = performance.now();
  try {
    const code = await run(args, { stdout: (t) => (stdout += t), stderr: (t) => (stderr += t) });
    return { code, stdout, stderr, ms: performance.now() - t0 };
  } finally {
    process.stdout.write = realOut;
    process.stderr.write = realErr;
  }
}
