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
