/**
 * Atomic file replacement: write a temporary file in the same folder, flush it to disk, rename it
 * over the target, then flush the folder. A crash leaves either the old file or the new one,
 * never a half-written one, because rename within one file system is atomic (POSIX rename(2);
 * on Windows Node uses MoveFileEx with MOVEFILE_REPLACE_EXISTING).
 */
import { randomBytes } from 'node:crypto';
import { open, rename, unlink } from 'node:fs/promises';
import path from 'node:path';

/** Temporary files start with this, so folder listings can skip them. */
export const TEMP_PREFIX = '.tmp-';

/**
 * Flushes a folder's entries to disk so the rename itself survives a power cut. Platforms that
 * cannot open a folder for reading (Windows: EISDIR/EPERM/EACCES) are skipped silently; there the
 * rename is already durable enough for our purpose.
 */
export async function fsyncDirectory(dir: string): Promise<void> {
  let handle;
  try {
    handle = await open(dir, 'r');
  } catch {
    return;
  }
  try {
    await handle.sync();
  } catch {
    // Some file systems refuse fsync on a folder (EINVAL); nothing more can be done.
  } finally {
    await handle.close();
  }
}

/**
 * Replaces `filePath` with `data` atomically. The folder must exist.
 *
 * @param filePath - absolute path of the file to write.
 * @param data - the new content (a string is written as UTF-8).
 */
export async function atomicWriteFile(filePath: string, data: string | Uint8Array): Promise<void> {
  const dir = path.dirname(filePath);
  const temp = path.join(
    dir,
    `${TEMP_PREFIX}${path.basename(filePath)}-${process.pid}-${randomBytes(6).toString('hex')}`,
  );
  const handle = await open(temp, 'wx', 0o644);
  let renamed = false;
  try {
    try {
      await handle.writeFile(data);
      await handle.sync();
    } finally {
      await handle.close();
    }
    await rename(temp, filePath);
    renamed = true;
    await fsyncDirectory(dir);
  } finally {
    if (!renamed) await unlink(temp).catch(() => undefined);
  }
}
