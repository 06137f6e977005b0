/**
 * Opening a WAV file on disk for the command line, safely and in bounded memory.
 *
 * Only a regular file is read: a FIFO, a device (the zero device would never end), a socket or a directory
 * is refused up front from its `stat`, before anything is opened, and checked again on the opened
 * descriptor (opened non-blocking, so a FIFO swapped in meanwhile cannot hang the open). The file is then
 * read with positioned reads a stretch at a time (`dsp/io/wav.ts` {@link ByteSource}), never whole, so files
 * over 2 GiB and RF64 files over 4 GB read like any other.
 */
import { closeSync, constants, fstatSync, openSync, readSync, statSync, type Stats } from 'node:fs';
import { openWav, type ByteSource, type WavLayout } from '../dsp/io/index.ts';
import { CliError, quotePath } from './errors.ts';

/** An open WAV file: its layout and its bytes; close it when done. */
export interface OpenWavFile {
  readonly layout: WavLayout;
  readonly bytes: ByteSource;
  close(): void;
}

/** What a non-regular file is, for the message. */
export function describeFileKind(st: Stats): string | null {
  if (st.isFile()) return null;
  if (st.isDirectory()) return 'a directory';
  if (st.isFIFO()) return 'a FIFO (named pipe)';
  if (st.isCharacterDevice()) return 'a character device';
  if (st.isBlockDevice()) return 'a block device';
  if (st.isSocket()) return 'a socket';
  if (st.isSymbolicLink()) return 'a symbolic link';
  return 'not a regular file';
}

function notRegular(path: string, kind: string): CliError {
  return new CliError(`${quotePath(path)} is ${kind}, not a WAV file`);
}

function openError(path: string, err: unknown): CliError {
  if (err instanceof CliError) return err;
  const code = (err as NodeJS.ErrnoException).code;
  const p = quotePath(path);
  if (code === 'ENOENT') return new CliError(`no such file: ${p}`);
  if (code === 'EACCES' || code === 'EPERM') return new CliError(`cannot read ${p}: permission denied`);
  if (code === 'EISDIR') return notRegular(path, 'a directory');
  if (code === 'ENOTDIR') return new CliError(`no such file: ${p} (a part of the path is not a directory)`);
  if (code === 'ELOOP') return new CliError(`cannot read ${p}: too many levels of symbolic links`);
  if (code === 'ENAMETOOLONG') return new CliError(`cannot read ${p}: the name is too long`);
  return new CliError(`cannot read ${p}: ${code ?? (err instanceof Error ? err.message : String(err))}`);
}

/**
 * A {@link ByteSource} over an open descriptor, with positioned reads.
 *
 * @param fd - An open file descriptor of a regular file.
 * @param sizeBytes - Its size, bytes.
 */
export function fdByteSource(fd: number, sizeBytes: number): ByteSource {
  return {
    sizeBytes,
    read(offset, into) {
      let done = 0;
      while (done < into.length && offset + done < sizeBytes) {
        const n = readSync(fd, into, done, into.length - done, offset + done);
        if (n <= 0) break;
        done += n;
      }
      return done;
    },
  };
}

/**
 * Opens a WAV file and reads its header.
 *
 * @param path - The path as typed.
 * @returns The layout and a byte source; call `close()` when done.
 * @throws CliError (exit code 1) for a missing or unreadable file, anything but a regular file, or a file
 *   that is not a readable WAV (the message from `dsp/io/wav.ts`, after the quoted name).
 * @example const f = openWavFile('take.wav'); try { … f.layout.sampleRateHz … } finally { f.close(); }
 */
export function openWavFile(path: string): OpenWavFile {
  let fd: number;
  try {
    const kind = describeFileKind(statSync(path));
    if (kind !== null) throw notRegular(path, kind);
    fd = openSync(path, constants.O_RDONLY | (constants.O_NONBLOCK ?? 0));
  } catch (err) {
    throw openError(path, err);
  }
  try {
    const st = fstatSync(fd);
    const kind = describeFileKind(st);
    if (kind !== null) throw notRegular(path, kind);
    const bytes = fdByteSource(fd, st.size);
    const layout = openWav(bytes);
    if (layout.kind === 'error') throw new CliError(`${quotePath(path)}: ${layout.message}`);
    return { layout, bytes, close: () => closeSync(fd) };
  } catch (err) {
    closeSync(fd);
    throw openError(path, err);
  }
}
