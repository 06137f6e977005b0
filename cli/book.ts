/**
 * `spanmeter book backup|restore|list`: the unit book on the command line.
 *
 * - `backup --dir RECORDS --out FILE.json` writes the whole book (records with their runs and trash,
 *   unreadable files byte for byte, drift logs, schema versions) as one file. It refuses to replace an
 *   existing file.
 * - `restore --dir RECORDS --in FILE.json [--on-conflict skip|copy]` merges a backup into the book:
 *   new records are added, new runs merged in; a record that differs from the book's is a conflict, and
 *   without `--on-conflict` the restore stops before writing anything and lists the conflicts.
 * - `list --dir RECORDS` prints the records, the trash and the unreadable files.
 *
 * `--dir` is the records folder (the desktop app's `<user data>/records`); drift logs are in its
 * `drift-logs` subfolder.
 */
import { open, readFile, stat } from 'node:fs/promises';
import path from 'node:path';
import { createRecordsStore, StoreError } from '../main/records-store.ts';
import { EXIT_USAGE, formatOptionsHelp, parseCommandArgs, type OptionSpecs } from './args.ts';
import { CliError } from './errors.ts';

const SPECS = {
  dir: { type: 'string', value: 'DIR', help: 'the records folder of the unit book' },
  out: { type: 'string', value: 'FILE', help: 'backup: the file to write (must not exist yet)' },
  in: { type: 'string', value: 'FILE', help: 'restore: the backup file to read' },
  'on-conflict': {
    type: 'string',
    value: 'skip|copy',
    help: 'restore: what to do with records that differ from the book’s (default: stop, write nothing)',
  },
  json: { type: 'boolean', help: 'print the outcome as JSON' },
} as const satisfies OptionSpecs;

/** Largest backup file `restore` reads: 512 MiB. */
const MAX_BACKUP_BYTES = 512 * 1024 * 1024;

/** The help text. */
export function bookUsage(): string {
  return [
    'usage: spanmeter book backup --dir RECORDS --out FILE.json',
    '       spanmeter book restore --dir RECORDS --in FILE.json [--on-conflict skip|copy]',
    '       spanmeter book list --dir RECORDS',
    '',
    'Back up, restore (merging, never overwriting) or list the unit book.',
    '',
    'options:',
    formatOptionsHelp(SPECS),
  ].join('\n');
}

/** A path for messages: control characters escaped, at most 200 characters. */
function shown(p: string, max = 200): string {
  const safe = p.replace(
    // eslint-disable-next-line no-control-regex -- control characters are exactly what is escaped
    /[\u0000-\u001f\u007f]/g,
    (c) => `\\x${c.charCodeAt(0).toString(16).padStart(2, '0')}`,
  );
  return safe.length > max ? `${safe.slice(0, max)}…` : safe;
}

function storeMessage(err: unknown): never {
  if (err instanceof StoreError) throw new CliError(shown(err.message.replace(/\s+/g, ' '), 600));
  const e = err as NodeJS.ErrnoException;
  if (e?.code && e.path) throw new CliError(`${shown(e.path)}: ${e.code} (${e.message.split(':')[0]})`);
  throw err;
}

/** Runs the command; returns the exit code. */
export async function main(args: string[]): Promise<number> {
  const { values, positionals, help } = parseCommandArgs('book', args, SPECS);
  if (help) {
    process.stdout.write(`${bookUsage()}\n`);
    return 0;
  }
  const [action, extra] = positionals;
  if (action === undefined)
    throw new CliError('say what to do: backup, restore or list (see spanmeter book --help)', EXIT_USAGE);
  if (extra !== undefined) throw new CliError(`unexpected argument '${shown(extra)}'`, EXIT_USAGE);
  if (!['backup', 'restore', 'list'].includes(action))
    throw new CliError(`unknown action '${shown(action)}'; actions are backup, restore, list`, EXIT_USAGE);
  if (values.dir === undefined) throw new CliError('--dir RECORDS is required', EXIT_USAGE);
  const dir = path.resolve(values.dir);
  const info = await stat(dir).catch(() => null);
  if (action !== 'restore' && (info === null || !info.isDirectory()))
    throw new CliError(`${shown(values.dir)} is not a folder`);
  if (info !== null && !info.isDirectory()) throw new CliError(`${shown(values.dir)} is not a folder`);
  const store = createRecordsStore({
    recordsDir: dir,
    autosaveFile: path.join(dir, '..', 'autosave', 'run.json'),
  });
  const print = (text: string) => process.stdout.write(`${text}\n`);

  if (action === 'list') {
    const list = await store.list().catch(storeMessage);
    if (values.json) print(JSON.stringify(list, null, 1));
    else {
      for (const r of list.records)
        print(`${r.id}\t${r.unitName}\t${r.runCount} runs\tupdated ${r.updatedAt}`);
      for (const r of list.trashed ?? []) print(`${r.id}\t${r.unitName}\tin the trash since ${r.deletedAt}`);
      for (const p of list.problems) print(`${p.file}\tunreadable, kept: ${p.message}`);
      if (list.records.length + (list.trashed?.length ?? 0) + list.problems.length === 0)
        print('(the book is empty)');
    }
    return 0;
  }

  if (action === 'backup') {
    if (values.out === undefined) throw new CliError('--out FILE.json is required', EXIT_USAGE);
    const out = path.resolve(values.out);
    const book = await store.backup().catch(storeMessage);
    // 'wx': never replace an existing file; written in full and flushed before we say it is done.
    let handle;
    try {
      handle = await open(out, 'wx', 0o644);
    } catch (err) {
      const code = (err as NodeJS.ErrnoException).code;
      throw new CliError(
        code === 'EEXIST'
          ? `${shown(values.out)} already exists; choose a new file name (a backup never replaces a file)`
          : `cannot create ${shown(values.out)}: ${code ?? (err as Error).message}`,
      );
    }
    try {
      await handle.writeFile(book.text);
      await handle.sync();
    } finally {
      await handle.close();
    }
    if (values.json) print(JSON.stringify({ file: out, records: book.records, driftLogs: book.driftLogs }));
    else print(`backed up ${book.records} records and ${book.driftLogs} drift logs to ${shown(out)}`);
    return 0;
  }

  // restore
  if (values.in === undefined) throw new CliError('--in FILE.json is required', EXIT_USAGE);
  const policyText = values['on-conflict'];
  if (policyText !== undefined && policyText !== 'skip' && policyText !== 'copy')
    throw new CliError(`--on-conflict must be skip or copy, got '${shown(policyText)}'`, EXIT_USAGE);
  const input = await stat(values.in).catch(() => null);
  if (input === null) throw new CliError(`${shown(values.in)} does not exist`);
  if (!input.isFile()) throw new CliError(`${shown(values.in)} is not a regular file`);
  if (input.size > MAX_BACKUP_BYTES)
    throw new CliError(
      `${shown(values.in)} is ${input.size} bytes; a backup is at most ${MAX_BACKUP_BYTES} bytes`,
    );
  const text = await readFile(values.in, 'utf8');
  const outcome = await store.restore(text, policyText ?? 'ask').catch(storeMessage);
  if (values.json) print(JSON.stringify(outcome, null, 1));
  if (outcome.kind === 'conflicts') {
    if (!values.json)
      for (const c of outcome.conflicts)
        process.stderr.write(`conflict: ${c.id} (${c.unitName}): ${c.reason}\n`);
    throw new CliError(
      `${outcome.conflicts.length} record(s) differ from the book's; nothing was restored. Run again with --on-conflict copy (keep both) or --on-conflict skip (leave them out)`,
    );
  }
  const c = outcome.counts;
  if (!values.json)
    print(
      `restored: ${c.added} added, ${c.merged} merged, ${c.unchanged} unchanged, ${c.copied} kept as copies, ${c.skipped} left out, ${c.driftLogs} drift logs, ${c.keptAside} unreadable entries kept aside`,
    );
  return 0;
}
