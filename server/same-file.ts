/**
 * Whether writing to one path would overwrite another file: the same file under another
 * spelling ("./a/../a.json"), through symbolic links (of the file or of a folder on the
 * way), or as a hard link (another name for the same inode).
 */
import { realpathSync, statSync } from 'node:fs';
import { basename, dirname, join, resolve } from 'node:path';

/** The canonical path of a file that may not exist yet: the real path of its folder, then its name. */
function canonical(path: string): string | null {
  try {
    return realpathSync(path);
  } catch {
    try {
      return join(realpathSync(dirname(resolve(path))), basename(path));
    } catch {
      return null;
    }
  }
}

function identity(path: string): { dev: number; ino: number } | null {
  try {
    const s = statSync(path);
    return { dev: s.dev, ino: s.ino };
  } catch {
    return null;
  }
}

export function sameFile(a: string, b: string): boolean {
  const ca = canonical(a);
  const cb = canonical(b);
  if (ca !== null && ca === cb) return true;
  const ia = identity(a);
  const ib = identity(b);
  return ia !== null && ib !== null && ia.dev === ib.dev && ia.ino === ib.ino;
}
