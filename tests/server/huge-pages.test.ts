// The npm scripts that start the server and the command line ask glibc for huge pages
// (server/huge-pages.ts says why), and the tunable does what it is for: a large typed array's
// memory comes in 2 MB pages. The second check needs glibc ≥ 2.35 and transparent huge pages
// enabled ("always" or "madvise"), as on the Debian 12 machine this runs on; it is skipped elsewhere.
import { spawnSync } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { HUGE_PAGES_SHELL_PREFIX, HUGE_PAGES_TUNABLE, withHugePages } from '../../server/huge-pages.ts';

const scripts = (JSON.parse(readFileSync(new URL('../../package.json', import.meta.url), 'utf8')) as { scripts: Record<string, string> }).scripts;

describe('huge pages for large typed arrays', () => {
  it('are asked for by every npm script that starts the server or the command line', () => {
    for (const name of ['start', 'cli', 'demo']) expect(scripts[name], name).toContain(`${HUGE_PAGES_SHELL_PREFIX} node dist/server/`);
  });

  it('keep the tunables the user set, and add this one once', () => {
    expect(withHugePages({}).GLIBC_TUNABLES).toBe(HUGE_PAGES_TUNABLE);
    expect(withHugePages({ GLIBC_TUNABLES: 'glibc.malloc.arena_max=2' }).GLIBC_TUNABLES).toBe(`glibc.malloc.arena_max=2:${HUGE_PAGES_TUNABLE}`);
    const once = withHugePages({ GLIBC_TUNABLES: `a=1:${HUGE_PAGES_TUNABLE}` });
    expect(once.GLIBC_TUNABLES).toBe(`a=1:${HUGE_PAGES_TUNABLE}`);
  });

  const thp = existsSync('/sys/kernel/mm/transparent_hugepage/enabled') ? readFileSync('/sys/kernel/mm/transparent_hugepage/enabled', 'utf8') : '[never]';
  const glibc = (process.report?.getReport() as { header?: { glibcVersionRuntime?: string } } | undefined)?.header?.glibcVersionRuntime;
  const usable = !thp.includes('[never]') && glibc !== undefined && Number(glibc.split('.')[1]) >= 35 && Number(glibc.split('.')[0]) >= 2;

  it.runIf(usable)('give a 64 MB SharedArrayBuffer huge pages when set, and none when not', () => {
    // The process's anonymous huge pages after touching every page of a 64 MB buffer (kB, from smaps_rollup).
    const code = `const a = new Uint8Array(new SharedArrayBuffer(64 << 20)); for (let i = 0; i < a.length; i += 4096) a[i] = 1;
      const m = /AnonHugePages:\\s+(\\d+)/.exec(require('fs').readFileSync('/proc/self/smaps_rollup', 'utf8')); console.log(m ? m[1] : 'none');`;
    const run = (env: NodeJS.ProcessEnv) => spawnSync(process.execPath, ['-e', code], { encoding: 'utf8', env }).stdout.trim();
    const plain = { ...process.env };
    delete plain.GLIBC_TUNABLES;
    const withPages = Number(run(withHugePages(plain)));
    const without = Number(run(plain));
    // At least half of the 64 MB in 2 MB pages with the tunable (alignment may leave the edges small).
    expect(withPages).toBeGreaterThanOrEqual(32 * 1024);
    if (thp.includes('[madvise]')) expect(without).toBeLessThan(withPages);
  });
});
