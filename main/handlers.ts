/**
 * The IPC handlers: what each channel does. Electron's `dialog` and the records store come in as
 * parameters, so every handler runs in plain Node tests with a fake dialog and a temporary folder.
 */
import { randomUUID } from 'node:crypto';
import { readFile, stat } from 'node:fs/promises';
import path from 'node:path';
import { atomicWriteFile } from './atomic-file.ts';
import { MAX_RECORD_FILE_BYTES, MiB } from './ipc-contract.ts';
import { IpcError, type IpcHandlers } from './ipc.ts';
import { WINDOWS_RESERVED_NAMES } from './record-id.ts';
import { parseRecordText, type RecordsStore } from './records-store.ts';

/** The subset of Electron's dialog options used here. */
export interface FileFilter {
  name: string;
  extensions: string[];
}

/** Electron's `dialog`, bound to the main window by main.ts, or a fake. */
export interface DialogLike {
  showSaveDialog(options: {
    title?: string;
    defaultPath?: string;
    filters?: FileFilter[];
  }): Promise<{ canceled: boolean; filePath?: string }>;
  showOpenDialog(options: {
    title?: string;
    filters?: FileFilter[];
    properties?: Array<'openFile'>;
  }): Promise<{ canceled: boolean; filePaths: string[] }>;
}

export interface HandlerDeps {
  store: RecordsStore;
  dialog: DialogLike;
  /** Folder the export dialog opens in (the user's documents folder in main.ts). */
  exportDir?(): string;
}

/**
 * Makes a name safe to offer in a save dialog on every platform: no folders, none of
 * `< > : " / \ | ? *` or control characters (reserved on Windows: Microsoft Learn, "Naming Files,
 * Paths, and Namespaces"), no leading or trailing dots or spaces, at most 120 characters, and the
 * format's extension. A reserved device name (`CON`, `NUL`, `COM1`…, reserved even with an
 * extension, same source) gets a trailing `_`.
 *
 * @example safeExportName('../../VCO 2: before/after', 'csv') // → 'after.csv'
 * @example safeExportName('VCO 2: before', 'json') // → 'VCO 2 before.json'
 */
export function safeExportName(suggested: string, format: 'json' | 'csv'): string {
  const base = suggested.split(/[/\\]/).pop() ?? '';
  let name = base
    // eslint-disable-next-line no-control-regex -- control characters are exactly what is removed
    .replace(/[<>:"|?*\u0000-\u001f\u007f]/g, '')
    .replace(/\s+/g, ' ')
    .replace(/^[\s.]+|[\s.]+$/g, '')
    .slice(0, 120)
    .trim();
  const ext = `.${format}`;
  if (name.toLowerCase().endsWith(ext)) name = name.slice(0, -ext.length).replace(/[\s.]+$/g, '');
  if (name === '') name = 'spanmeter-export';
  if (WINDOWS_RESERVED_NAMES.includes(name.split('.')[0].trim().toLowerCase())) name = `${name}_`;
  return `${name}${ext}`;
}

/** Largest unit book backup `book:restore` reads: 512 MiB. */
export const MAX_BACKUP_BYTES = 512 * MiB;

function mib(bytes: number): string {
  return `${(bytes / MiB).toFixed(1)} MiB`;
}

/** Builds the handler of every channel. */
export function createHandlers(deps: HandlerDeps): IpcHandlers {
  const { store, dialog } = deps;
  /** Backups whose restore stopped at conflicts, by the token handed to the renderer. */
  const pendingRestores = new Map<string, string>();

  async function pickOne(title: string, filters: FileFilter[]): Promise<string | null> {
    const picked = await dialog.showOpenDialog({ title, filters, properties: ['openFile'] });
    if (picked.canceled || picked.filePaths.length === 0) return null;
    return picked.filePaths[0];
  }

  return {
    'records:list': () => store.list(),
    'records:load': ({ id }) => store.load(id),
    'records:save': (draft) => store.save(draft),
    'records:delete': ({ id }) => store.delete(id),
    'records:delete-run': ({ id, runId }) => store.deleteRun(id, runId),
    'records:restore-run': ({ id, runId }) => store.restoreRun(id, runId),
    'records:undelete': ({ id }) => store.undelete(id),

    'book:backup': async () => {
      const stamp = new Date().toISOString().slice(0, 10);
      const name = `spanmeter-unit-book-${stamp}.json`;
      const chosen = await dialog.showSaveDialog({
        title: 'Back up the unit book',
        defaultPath: deps.exportDir ? path.join(deps.exportDir(), name) : name,
        filters: [{ name: 'Spanmeter unit book backup (JSON)', extensions: ['json'] }],
      });
      if (chosen.canceled || !chosen.filePath) return { kind: 'cancelled' as const };
      const target = path.extname(chosen.filePath) === '' ? `${chosen.filePath}.json` : chosen.filePath;
      const book = await store.backup();
      await atomicWriteFile(target, book.text);
      return {
        kind: 'saved' as const,
        fileName: path.basename(target),
        records: book.records,
        driftLogs: book.driftLogs,
      };
    },

    'book:restore': async ({ policy, token }) => {
      let file = token !== undefined ? pendingRestores.get(token) : undefined;
      if (token !== undefined && file === undefined) {
        throw new IpcError(
          'invalid-payload',
          'That restore is no longer pending; choose the backup file again.',
        );
      }
      file ??=
        (await pickOne('Restore a unit book backup', [
          { name: 'Spanmeter unit book backup (JSON)', extensions: ['json'] },
        ])) ?? undefined;
      if (file === undefined) return { kind: 'cancelled' as const };
      if (token !== undefined) pendingRestores.delete(token);
      const fileName = path.basename(file);
      const info = await stat(file);
      if (!info.isFile()) throw new IpcError('invalid-file', `${fileName} is not a file.`);
      if (info.size > MAX_BACKUP_BYTES) {
        throw new IpcError(
          'file-too-large',
          `${fileName} is ${mib(info.size)}; a unit book backup is at most ${mib(MAX_BACKUP_BYTES)}.`,
        );
      }
      const outcome = await store.restore(await readFile(file, 'utf8'), policy);
      if (outcome.kind === 'restored') return { kind: 'restored' as const, fileName, counts: outcome.counts };
      const newToken = randomUUID();
      pendingRestores.set(newToken, file);
      return {
        kind: 'conflicts' as const,
        fileName,
        token: newToken,
        conflicts: outcome.conflicts,
        counts: outcome.counts,
      };
    },

    'drift:save': (log) => store.saveDriftLog(log),
    'drift:list': () => store.listDriftLogs(),
    'drift:load': ({ id }) => store.loadDriftLog(id),

    'records:export': async ({ format, suggestedName, content }) => {
      const name = safeExportName(suggestedName, format);
      const chosen = await dialog.showSaveDialog({
        title: format === 'csv' ? 'Export as CSV' : 'Export as JSON',
        defaultPath: deps.exportDir ? path.join(deps.exportDir(), name) : name,
        filters:
          format === 'csv'
            ? [{ name: 'CSV (comma-separated values)', extensions: ['csv'] }]
            : [{ name: 'JSON', extensions: ['json'] }],
      });
      if (chosen.canceled || !chosen.filePath) return { kind: 'cancelled' as const };
      const target = path.extname(chosen.filePath) === '' ? `${chosen.filePath}.${format}` : chosen.filePath;
      await atomicWriteFile(target, content);
      return { kind: 'saved' as const, fileName: path.basename(target) };
    },

    'records:import': async () => {
      const file = await pickOne('Import a unit record', [
        { name: 'Spanmeter record (JSON)', extensions: ['json'] },
      ]);
      if (file === null) return { kind: 'cancelled' as const };
      const fileName = path.basename(file);
      const info = await stat(file);
      if (info.size > MAX_RECORD_FILE_BYTES) {
        throw new IpcError(
          'file-too-large',
          `${fileName} is ${mib(info.size)}; a record file is at most ${mib(MAX_RECORD_FILE_BYTES)}.`,
        );
      }
      const parsed = parseRecordText(await readFile(file, 'utf8'));
      if (parsed.kind === 'unsupported') {
        throw new IpcError('unsupported-schema-version', `${fileName} cannot be imported: ${parsed.reason}.`);
      }
      if (parsed.kind === 'corrupt') {
        throw new IpcError('invalid-file', `${fileName} is not a Spanmeter record: ${parsed.reason}.`);
      }
      return { kind: 'imported' as const, fileName, record: parsed.record };
    },

    'run:autosave': ({ state, seq }) => store.saveAutosave(state, seq),
    'run:load-autosave': () => store.loadAutosave(),
    'run:clear-autosave': () => store.clearAutosave(),
  };
}
