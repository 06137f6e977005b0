// Placeholder until the real `spanmeter bench` lands; the dispatcher in cli/main.ts already routes to it.
import { CliError } from './errors.ts';

/** Run `spanmeter bench` (not available yet). */
export async function main(_args: string[]): Promise<number> {
  throw new CliError('not available yet');
}
