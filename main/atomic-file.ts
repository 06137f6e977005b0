/**
 * Atomic file replacement: write a temporary file in the same folder, flush it to disk, rename it
 * over the target, then flush the folder. A crash leaves either the old file or the new one,
 * never a half-written one, because rename within one file system is atomic (POSIX rename(2);
 * on Windows Node uses MoveFileEx with MOVEFILE_REPLACE_EXISTING), and the data is on disk before
 * the rename (fsync(2) of the file) and the rename is on disk before the save is acknowledged
 * (fsync(2) of the folder).
 *
 * All file-system calls go through a {@link StoreFs}, Node's by default, so tests can inject one that
 * fails, writes short, or forgets what was not flushed when the "power" goes.
 */
import { randomBytes } from 'node:crypto';
import * as fsp from 'node:fs/promises';
import path from 'node:path';

/** Temporary files start with this, so folder listings can skip them. */
export const TEMP_PREFIX = '.tmp-';

/** The part of an open file the store uses. */
export interface FileHandleLike {
  /** Writes `length` bytes of `data` from `offset` at `position`; may write fewer (a short write). */
  write(
    data: Uint8Array,
    offset: number,
    length: number,
    position: number,
  ): Promise<{ bytesWritten: number }>;
  /** fsync(2). */
  sync(): Promise<void>;
  close(): Promise<void>;
}

/** The file-system calls the records store makes: Node's `fs/promises`, or a fake in tests. */
export interface StoreFs {
  /** `wx`: create a new file, failing if it exists; `r`: open for reading (also a folder, to fsync it). */
  open(file: string, flags: 'wx' | 'r', mode?: number): Promise<FileHandleLike>;
  rename(from: string, to: string): Promise<void>;
  unlink(file: string): Promise<void>;
  readFile(file: string): Promise<Uint8Array>;
  readdir(dir: string): Promise<string[]>;
  stat(file: string): Promise<{ size: number; isFile(): boolean }>;
  mkdir(dir: string, options: { recursive: true }): Promise<unknown>;
}

/** Node's file system. */
export const nodeFs: StoreFs = {
  open: (file, flags, mode) => fsp.open(file, flags, mode),
  rename: (from, to) => fsp.rename(from, to),
  unlink: (file) => fsp.unlink(file),
  readFile: (file) => fsp.readFile(file),
  readdir: (dir) => fsp.readdir(dir),
  stat: (file) => fsp.stat(file),
  mkdir: (dir, options) => fsp.mkdir(dir, options),
};

/**
 * Flushes a folder's entries to disk so the rename itself survives a power cut. On Windows, which
 * cannot open a folder for reading, this is skipped (MoveFileEx there is durable enough for our
 * purpose); elsewhere any failure is thrown, so the caller does not acknowledge a save that may be lost.
 */
export async function fsyncDirectory(dir: string, fs: StoreFs = nodeFs): Promise<void> {
  let handle;
  try {
    handle = await fs.open(dir, 'r');
  } catch (err) {
    // Windows cannot open a folder for reading; everywhere else a failure here means the rename may
    // not be on disk, and the save must not be acknowledged (found by test/records-durability.test.ts).
    if (process.platform === 'win32') return;
    throw err;
  }
  try {
    await handle.sync();
  } catch (err) {
    // Some file systems refuse fsync on a folder (EINVAL); nothing more can be done there. An I/O
    // error means the rename may not be on disk: the caller must not acknowledge the save.
    if ((err as { code?: string }).code !== 'EINVAL') throw err;
  } finally {
    await handle.close();
  }
}

/**
 * Writes all of `bytes` through `handle`, going on after short writes; throws when the file system
 * stops making progress.
 */
async function writeAll(handle: FileHandleLike, bytes: Uint8Array, file: string): Promise<void> {
  let done = 0;
  let stalls = 0;
  while (done < bytes.byteLength) {
    const { bytesWritten } = await handle.write(bytes, done, bytes.byteLength - done, done);
    if (bytesWritten <= 0) {
      if (++stalls > 3)
        throw Object.assign(new Error(`${file}: the disk accepted no more data`), { code: 'EIO' });
      continue;
    }
    stalls = 0;
    done += bytesWritten;
  }
}

/** The name of a new temporary file for `filePath`: in its folder, with the process id in it. */
export function tempNameFor(filePath: string): string {
  return path.join(
    path.dirname(filePath),
    `${TEMP_PREFIX}${path.basename(filePath)}-${process.pid}-${randomBytes(6).toString('hex')}`,
  );
}

/**
 * The process id in a temporary file's name, or null when the name has none.
 * @example tempFileOwner('.tmp-vco-a.json-4242-0a1b2c3d4e5f') // → 4242
 */
export function tempFileOwner(name: string): number | null {
  const m = /-(\d+)-[0-9a-f]{12}$/.exec(name);
  return m ? Number(m[1]) : null;
}

/**
 * Replaces `filePath` with `data` atomically. The folder must exist. On any failure the temporary file
 * is removed (when the file system still lets us) and the old file is left as it was.
 *
 * @param filePath - absolute path of the file to write.
 * @param data - the new content (a string is written as UTF-8).
 * @param fs - the file system (Node's by default).
 */
export async function atomicWriteFile(
  filePath: string,
  data: string | Uint8Array,
  fs: StoreFs = nodeFs,
): Promise<void> {
  const dir = path.dirname(filePath);
  const temp = tempNameFor(filePath);
  const bytes = typeof data === 'string' ? new TextEncoder().encode(data) : data;
  const handle = await fs.open(temp, 'wx', 0o644);
  let renamed = false;
  try {
    try {
      await writeAll(handle, bytes, temp);
      await handle.sync();
    } finally {
      await handle.close();
    }
    await fs.rename(temp, filePath);
    renamed = true;
    await fsyncDirectory(dir, fs);
  } finally {
    if (!renamed) await fs.unlink(temp).catch(() => undefined);
  }
}
