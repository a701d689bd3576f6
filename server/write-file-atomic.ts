/**
 * Writing an output file so that it is either wholly the new content or untouched: the
 * bytes go to a temporary file in the same folder, are flushed to the disk (fsync), and the
 * temporary file is then renamed over the target, which the file system does in one step.
 * A failure at any point (a full disk, a quota, a size limit, no permission) removes the
 * temporary file and leaves an existing target as it was.
 */
import * as nodeFs from 'node:fs';
import { randomBytes } from 'node:crypto';
import { basename, dirname, join } from 'node:path';

/** The file-system calls used, so that a test can make one of them fail. */
export type FileSystem = Pick<
  typeof nodeFs,
  'openSync' | 'writeSync' | 'fsyncSync' | 'closeSync' | 'renameSync' | 'unlinkSync' | 'statSync' | 'realpathSync' | 'fchmodSync'
>;

export type WriteOutcome =
  | { ok: true }
  | {
      ok: false;
      /** Why, in plain words with the system's code, e.g. "no space left on the device (ENOSPC)". */
      reason: string;
      /** A file was at the target before and still holds its previous content. */
      existed: boolean;
    };

const reasons: Record<string, string> = {
  ENOSPC: 'no space left on the device',
  EDQUOT: 'the disk quota is used up',
  EFBIG: 'the file would exceed the size limit',
  EACCES: 'permission denied',
  EPERM: 'operation not permitted',
  EROFS: 'the file system is read-only',
  ENOENT: 'the folder does not exist',
  ENOTDIR: 'a part of the path is not a folder',
  EISDIR: 'it is a folder',
  EIO: 'input/output error',
};

function reasonOf(e: unknown): string {
  const code = (e as NodeJS.ErrnoException | null)?.code;
  if (code && reasons[code]) return `${reasons[code]} (${code})`;
  return e instanceof Error ? e.message : String(e);
}

function errnoCode(e: unknown): string | undefined {
  return (e as NodeJS.ErrnoException | null)?.code;
}

function writeAll(fs: FileSystem, fd: number, bytes: Uint8Array): void {
  let offset = 0;
  while (offset < bytes.length) {
    const n = fs.writeSync(fd, bytes, offset, bytes.length - offset);
    // A write that makes no progress would loop for ever; the system reports no error for it.
    if (!(n > 0)) throw Object.assign(new Error('the write made no progress'), { code: 'EIO' });
    offset += n;
  }
}

/** Flushes the folder entry of the rename too; some file systems cannot (EINVAL), which is not a failure of the write. */
function syncFolder(fs: FileSystem, folder: string): void {
  let fd = -1;
  try {
    fd = fs.openSync(folder, 'r');
    fs.fsyncSync(fd);
  } catch {
    // best effort: the file itself is already on the disk
  } finally {
    if (fd >= 0) fs.closeSync(fd);
  }
}

export function writeFileAtomic(path: string, data: string | Uint8Array, fs: FileSystem = nodeFs): WriteOutcome {
  const bytes = typeof data === 'string' ? Buffer.from(data, 'utf8') : data;
  // Through a symbolic link, the linked file is replaced and the link kept.
  let target = path;
  try {
    target = fs.realpathSync(path);
  } catch {
    // not there yet (or a dangling link): written at the path as given
  }
  let existing: nodeFs.Stats | null = null;
  try {
    existing = fs.statSync(target);
  } catch (e) {
    if (errnoCode(e) !== 'ENOENT') return { ok: false, reason: reasonOf(e), existed: false };
  }
  if (existing?.isDirectory()) return { ok: false, reason: reasons.EISDIR, existed: true };
  if (existing && !existing.isFile()) return writeInPlace(fs, target, bytes);

  const temporary = join(dirname(target), `.${basename(target)}.${process.pid}-${randomBytes(6).toString('hex')}.tmp`);
  let fd = -1;
  let created = false;
  try {
    // 'wx': never reuse a file that happens to be there.
    fd = fs.openSync(temporary, 'wx', 0o666);
    created = true;
    // A replaced file keeps its permissions (the new one would otherwise get the umask's).
    if (existing) fs.fchmodSync(fd, existing.mode & 0o7777);
    writeAll(fs, fd, bytes);
    fs.fsyncSync(fd);
    const closing = fd;
    fd = -1;
    fs.closeSync(closing);
    fs.renameSync(temporary, target);
    created = false;
  } catch (e) {
    if (fd >= 0) {
      try {
        fs.closeSync(fd);
      } catch {
        // already failing; the close error adds nothing
      }
    }
    if (created) {
      try {
        fs.unlinkSync(temporary);
      } catch {
        // nothing more can be done; the reason below is the first failure
      }
    }
    return { ok: false, reason: reasonOf(e), existed: existing !== null };
  }
  syncFolder(fs, dirname(target));
  return { ok: true };
}

/**
 * A device or a named pipe (/dev/null, a FIFO read by another program) is a stream, not a
 * file to replace: renaming over it would put a plain file in its place.
 */
function writeInPlace(fs: FileSystem, target: string, bytes: Uint8Array): WriteOutcome {
  let fd = -1;
  try {
    fd = fs.openSync(target, 'w');
    writeAll(fs, fd, bytes);
    return { ok: true };
  } catch (e) {
    return { ok: false, reason: reasonOf(e), existed: false };
  } finally {
    if (fd >= 0) {
      try {
        fs.closeSync(fd);
      } catch {
        // the outcome is already decided
      }
    }
  }
}
