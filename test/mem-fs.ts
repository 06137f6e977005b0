// An in-memory file system for the records store (main/atomic-file.ts StoreFs) that models what survives a
// power cut: file data reaches the disk only through fsync(2) of the file, and folder entries (create,
// rename, unlink) only through fsync(2) of the folder. This is the POSIX guarantee and nothing more
// (POSIX.1-2017 fsync(): "all data for the open file descriptor ... is to be transferred to the storage
// device"; a rename is durable only once its directory is synced, as the Linux fsync(2) man page notes).
//
// Two crash images are offered:
// - 'durable': only what was fsynced (the worst case for a save that skipped fsyncs);
// - 'metadata-first': folder entries as the program last saw them, file data only as fsynced: a journaling
//   file system that commits the rename before the data (ext4 data=writeback; the classic zero-length
//   file after a crash), the worst case for a save that renames before fsyncing the data.
//
// Faults can be injected per operation: fail with EIO, or write short.
import path from 'node:path';
import type { FileHandleLike, StoreFs } from '../main/atomic-file.ts';

interface Inode {
  data: Uint8Array;
  durable: Uint8Array;
}

type Entry = number | 'dir';

/** One operation as the store made it. */
export interface FsOp {
  readonly op:
    'open' | 'write' | 'sync' | 'close' | 'rename' | 'unlink' | 'readFile' | 'readdir' | 'stat' | 'mkdir';
  readonly path: string;
}

/** What an injected fault does to an operation. */
export type Fault = 'fail' | 'short' | 'zero';

/** A disk image after a crash: path → bytes, and the folders. */
export interface CrashImage {
  readonly files: ReadonlyMap<string, Uint8Array>;
  readonly dirs: ReadonlySet<string>;
}

function enoent(p: string): Error {
  return Object.assign(new Error(`ENOENT: no such file or directory, '${p}'`), { code: 'ENOENT', path: p });
}

export class MemFs implements StoreFs {
  private inodes = new Map<number, Inode>();
  private entries = new Map<string, Entry>();
  private durableEntries = new Map<string, Entry>();
  private nextInode = 1;
  /** Every operation so far. */
  readonly ops: FsOp[] = [];
  /** Decides a fault for an operation (by its index in `ops`), or none. */
  fault: ((op: FsOp, index: number) => Fault | undefined) | null = null;
  /** Called after every operation (to take crash images). */
  afterOp: ((index: number) => void) | null = null;
  /**
   * fsync calls that do nothing: `all` is the "store with its fsyncs removed" variant; `files` and `dirs`
   * remove only the data or only the folder flush.
   */
  dropSync: 'none' | 'all' | 'files' | 'dirs' = 'none';

  constructor(image?: CrashImage) {
    this.mkdirAll('/');
    if (image) {
      for (const d of image.dirs) this.mkdirAll(d);
      for (const [p, bytes] of image.files) {
        const id = this.nextInode++;
        this.inodes.set(id, { data: bytes.slice(), durable: bytes.slice() });
        this.entries.set(p, id);
        this.durableEntries.set(p, id);
      }
    }
  }

  private mkdirAll(dir: string): void {
    let d = path.resolve(dir);
    for (;;) {
      this.entries.set(d, 'dir');
      this.durableEntries.set(d, 'dir'); // folders are assumed to exist on disk already
      const parent = path.dirname(d);
      if (parent === d) break;
      d = parent;
    }
  }

  private begin(op: FsOp['op'], p: string): Fault | undefined {
    const entry: FsOp = { op, path: p };
    this.ops.push(entry);
    const f = this.fault?.(entry, this.ops.length - 1);
    if (f === 'fail')
      throw Object.assign(new Error(`EIO: i/o error, ${op} '${p}'`), { code: 'EIO', path: p });
    return f;
  }

  private end(): void {
    this.afterOp?.(this.ops.length - 1);
  }

  /** Writes a file directly, durably (test setup). */
  put(p: string, bytes: Uint8Array | string): void {
    const data = typeof bytes === 'string' ? new TextEncoder().encode(bytes) : bytes;
    this.mkdirAll(path.dirname(p));
    const id = this.nextInode++;
    this.inodes.set(id, { data: data.slice(), durable: data.slice() });
    this.entries.set(path.resolve(p), id);
    this.durableEntries.set(path.resolve(p), id);
  }

  /** A file's current bytes, or null. */
  get(p: string): Uint8Array | null {
    const e = this.entries.get(path.resolve(p));
    return typeof e === 'number' ? this.inodes.get(e)!.data.slice() : null;
  }

  /** Names in a folder, as the program sees them now. */
  list(dir: string): string[] {
    const d = path.resolve(dir);
    return [...this.entries.keys()]
      .filter((p) => p !== d && path.dirname(p) === d)
      .map((p) => path.basename(p))
      .sort();
  }

  /** What the disk holds if the power goes now. */
  crashImage(mode: 'durable' | 'metadata-first'): CrashImage {
    const entries = mode === 'durable' ? this.durableEntries : this.entries;
    const files = new Map<string, Uint8Array>();
    const dirs = new Set<string>();
    for (const [p, e] of entries) {
      if (e === 'dir') dirs.add(p);
      else files.set(p, this.inodes.get(e)!.durable.slice());
    }
    return { files, dirs };
  }

  async open(file: string, flags: 'wx' | 'r'): Promise<FileHandleLike> {
    const p = path.resolve(file);
    this.begin('open', p);
    const existing = this.entries.get(p);
    let handle: FileHandleLike;
    if (flags === 'wx') {
      if (existing !== undefined) throw Object.assign(new Error(`EEXIST: '${p}'`), { code: 'EEXIST' });
      if (this.entries.get(path.dirname(p)) !== 'dir') throw enoent(p);
      const id = this.nextInode++;
      const inode: Inode = { data: new Uint8Array(0), durable: new Uint8Array(0) };
      this.inodes.set(id, inode);
      this.entries.set(p, id);
      handle = this.fileHandle(p, inode);
    } else {
      if (existing === undefined) throw enoent(p);
      handle = existing === 'dir' ? this.dirHandle(p) : this.fileHandle(p, this.inodes.get(existing)!);
    }
    this.end();
    return handle;
  }

  private fileHandle(p: string, inode: Inode): FileHandleLike {
    return {
      write: async (data, offset, length, position) => {
        const f = this.begin('write', p);
        let n = length;
        if (f === 'short') n = Math.max(1, Math.floor(length / 2));
        if (f === 'zero') n = 0;
        const end = position + n;
        const next = new Uint8Array(Math.max(inode.data.length, end));
        next.set(inode.data);
        next.set(data.subarray(offset, offset + n), position);
        inode.data = next;
        this.end();
        return { bytesWritten: n };
      },
      sync: async () => {
        this.begin('sync', p);
        if (this.dropSync !== 'all' && this.dropSync !== 'files') inode.durable = inode.data.slice();
        this.end();
      },
      close: async () => {
        this.begin('close', p);
        this.end();
      },
    };
  }

  private dirHandle(dir: string): FileHandleLike {
    return {
      write: async () => {
        throw Object.assign(new Error('EISDIR'), { code: 'EISDIR' });
      },
      sync: async () => {
        this.begin('sync', dir);
        if (this.dropSync !== 'all' && this.dropSync !== 'dirs') {
          for (const p of [...this.durableEntries.keys()])
            if (path.dirname(p) === dir && this.durableEntries.get(p) !== 'dir')
              this.durableEntries.delete(p);
          for (const [p, e] of this.entries)
            if (path.dirname(p) === dir && e !== 'dir') this.durableEntries.set(p, e);
        }
        this.end();
      },
      close: async () => {
        this.begin('close', dir);
        this.end();
      },
    };
  }

  async rename(from: string, to: string): Promise<void> {
    const a = path.resolve(from);
    const b = path.resolve(to);
    this.begin('rename', `${a} -> ${b}`);
    const e = this.entries.get(a);
    if (e === undefined) throw enoent(a);
    this.entries.set(b, e);
    this.entries.delete(a);
    this.end();
  }

  async unlink(file: string): Promise<void> {
    const p = path.resolve(file);
    this.begin('unlink', p);
    const e = this.entries.get(p);
    if (typeof e !== 'number') throw enoent(p);
    this.entries.delete(p);
    this.end();
  }

  async readFile(file: string): Promise<Uint8Array> {
    const p = path.resolve(file);
    this.begin('readFile', p);
    const e = this.entries.get(p);
    if (typeof e !== 'number') throw enoent(p);
    this.end();
    return this.inodes.get(e)!.data.slice();
  }

  async readdir(dir: string): Promise<string[]> {
    const d = path.resolve(dir);
    this.begin('readdir', d);
    if (this.entries.get(d) !== 'dir') throw enoent(d);
    this.end();
    return this.list(d);
  }

  async stat(file: string): Promise<{ size: number; isFile(): boolean }> {
    const p = path.resolve(file);
    this.begin('stat', p);
    const e = this.entries.get(p);
    if (e === undefined) throw enoent(p);
    this.end();
    const size = e === 'dir' ? 0 : this.inodes.get(e)!.data.length;
    return { size, isFile: () => e !== 'dir' };
  }

  async mkdir(dir: string): Promise<unknown> {
    const d = path.resolve(dir);
    this.begin('mkdir', d);
    this.mkdirAll(d);
    this.end();
    return undefined;
  }
}
