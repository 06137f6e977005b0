/**
 * The names of every IPC channel between the renderer and the main process.
 *
 * This module has no dependencies so that the sandboxed preload can import it without pulling zod
 * into its bundle. The schemas for each channel live in `ipc-contract.ts`.
 */
export const CHANNELS = [
  'records:list',
  'records:load',
  'records:save',
  'records:delete',
  'records:export',
  'records:import',
  'records:delete-run',
  'records:restore-run',
  'records:undelete',
  'book:backup',
  'book:restore',
  'drift:save',
  'drift:list',
  'drift:load',
  'run:autosave',
  'run:load-autosave',
  'run:clear-autosave',
] as const;

/** One IPC channel name, for example `'records:load'`. */
export type Channel = (typeof CHANNELS)[number];
