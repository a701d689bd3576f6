/**
 * writeFileAtomic: the target is either wholly the new content or byte-identical to what it
 * was. Failures of a full disk are made by handing the function a file system whose write,
 * fsync, rename or create fails as the kernel would (ENOSPC, EIO, EACCES), never by filling
 * a disk.
 */
import { spawn, spawnSync } from 'node:child_process';
import * as fs from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { writeFileAtomic, type FileSystem } from '../../server/write-file-atomic.ts';

let dir: string;
beforeAll(() => {
  dir = fs.mkdtempSync(join(tmpdir(), 'tidemark-atomic-'));
});
afterAll(() => {
  fs.rmSync(dir, { recursive: true, force: true });
});

const previous = Buffer.from('%PDF-1.3 the previous report\n'.repeat(200));
const next = Buffer.alloc(300_000, 0x41);

function folderWithPrevious(name: string): { folder: string; target: string } {
  const folder = join(dir, name);
  fs.mkdirSync(folder);
  const target = join(folder, 'prev.pdf');
  fs.writeFileSync(target, previous);
  return { folder, target };
}

const failure = (code: string) => Object.assign(new Error(`${code}: simulated failure`), { code });

/** Like the disk filling up part-way: the first write is accepted in part, the next fails. */
function fullDiskAfter(bytes: number): FileSystem {
  let room = bytes;
  return {
    ...fs,
    writeSync: ((fd: number, buffer: Uint8Array, offset: number, length: number) => {
      if (room <= 0) throw failure('ENOSPC');
      const n = Math.min(length, room);
      room -= n;
      return fs.writeSync(fd, buffer, offset, n);
    }) as FileSystem['writeSync'],
  };
}

describe('writeFileAtomic', () => {
  it('writes a new file, leaving nothing else in the folder', () => {
    const folder = join(dir, 'new');
    fs.mkdirSync(folder);
    expect(writeFileAtomic(join(folder, 'out.csv'), 'time,amount\n0,1\n')).toEqual({ ok: true });
    expect(fs.readFileSync(join(folder, 'out.csv'), 'utf8')).toBe('time,amount\n0,1\n');
    expect(fs.readdirSync(folder)).toEqual(['out.csv']);
  });

  it('replaces an existing file whole and keeps its permissions', () => {
    const { folder, target } = folderWithPrevious('replace');
    fs.chmodSync(target, 0o640);
    expect(writeFileAtomic(target, next)).toEqual({ ok: true });
    expect(fs.readFileSync(target).equals(next)).toBe(true);
    expect(fs.statSync(target).mode & 0o777).toBe(0o640);
    expect(fs.readdirSync(folder)).toEqual(['prev.pdf']);
  });

  it('a full disk part-way through: the previous file is byte-identical and the temporary file is gone', () => {
    const { folder, target } = folderWithPrevious('full');
    const outcome = writeFileAtomic(target, next, fullDiskAfter(100_000));
    expect(outcome).toEqual({ ok: false, reason: 'no space left on the device (ENOSPC)', existed: true });
    expect(fs.readFileSync(target).equals(previous)).toBe(true);
    expect(fs.readdirSync(folder)).toEqual(['prev.pdf']);
  });

  it('fsync, close or rename failing: the previous file is byte-identical, no temporary file is left', () => {
    const cases: [string, Partial<FileSystem>][] = [
      ['fsync', { fsyncSync: () => { throw failure('EIO'); } }],
      ['rename', { renameSync: () => { throw failure('EACCES'); } }],
      [
        'close',
        {
          closeSync: (fd: number) => {
            fs.closeSync(fd);
            throw failure('EDQUOT'); // NFS reports a quota at close
          },
        },
      ],
    ];
    for (const [name, broken] of cases) {
      const { folder, target } = folderWithPrevious(`broken-${name}`);
      const outcome = writeFileAtomic(target, next, { ...fs, ...broken });
      expect(outcome.ok, name).toBe(false);
      expect(fs.readFileSync(target).equals(previous), name).toBe(true);
      expect(fs.readdirSync(folder), name).toEqual(['prev.pdf']);
    }
  });

  it('a temporary file that cannot be created (no permission in the folder): nothing changes', () => {
    const { folder, target } = folderWithPrevious('no-create');
    const noCreate: FileSystem = {
      ...fs,
      openSync: ((path: fs.PathLike, flags?: fs.OpenMode, mode?: fs.Mode) => {
        if (flags === 'wx') throw failure('EACCES');
        return fs.openSync(path, flags ?? 'r', mode);
      }) as FileSystem['openSync'],
    };
    expect(writeFileAtomic(target, next, noCreate)).toEqual({ ok: false, reason: 'permission denied (EACCES)', existed: true });
    expect(fs.readFileSync(target).equals(previous)).toBe(true);
    expect(fs.readdirSync(folder)).toEqual(['prev.pdf']);
  });

  it('a folder that does not exist, or a target that is a folder, is an error naming why', () => {
    expect(writeFileAtomic(join(dir, 'absent', 'out.json'), '{}')).toEqual({ ok: false, reason: 'the folder does not exist (ENOENT)', existed: false });
    const folder = join(dir, 'a-folder');
    fs.mkdirSync(folder);
    expect(writeFileAtomic(folder, '{}')).toEqual({ ok: false, reason: 'it is a folder', existed: true });
  });

  it('through a symbolic link: the linked file gets the content and the link stays a link', () => {
    const { folder, target } = folderWithPrevious('linked');
    const link = join(folder, 'link.pdf');
    fs.symlinkSync(target, link);
    expect(writeFileAtomic(link, next)).toEqual({ ok: true });
    expect(fs.lstatSync(link).isSymbolicLink()).toBe(true);
    expect(fs.readFileSync(target).equals(next)).toBe(true);
  });

  it('a named pipe is written into, not replaced by a plain file', async () => {
    const fifo = join(dir, 'pipe');
    expect(spawnSync('mkfifo', [fifo]).status).toBe(0);
    const reader = spawn('cat', [fifo]);
    const chunks: Buffer[] = [];
    reader.stdout.on('data', (c: Buffer) => chunks.push(c));
    const done = new Promise<void>((resolve) => reader.on('close', () => resolve()));
    expect(writeFileAtomic(fifo, 'through the pipe\n')).toEqual({ ok: true });
    await done;
    expect(Buffer.concat(chunks).toString('utf8')).toBe('through the pipe\n');
    expect(fs.statSync(fifo).isFIFO()).toBe(true);
  });
});
