// The engine setting of server/engine-flags.ts: this Node's V8 knows it, tuneEngine() does what
// the module says (an optimised Array.prototype.map then makes the same kind of array as the
// unoptimised one), and the server and the command line make it before anything else.
import { spawnSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';

const engineFlags = new URL('../../server/engine-flags.ts', import.meta.url).href;

/**
 * Whether an array made by f's map once f is optimised is "holey" (V8's test natives), in a
 * process that called tuneEngine() from server/engine-flags.ts first, or not.
 */
function holeyAfterOptimising(tuned: boolean): { out: string; err: string } {
  const code = `(async () => {
    ${tuned ? `(await import(${JSON.stringify(engineFlags)})).tuneEngine();` : ''}
    function f(a) { return a.map((x) => x + 1); }
    %PrepareFunctionForOptimization(f); f([1, 2, 3]); f([1, 2, 3]); %OptimizeFunctionOnNextCall(f);
    const r = f([1, 2, 3]);
    console.log(%ActiveTierIsTurbofan(f) ? (%HasHoleyElements(r) ? 'holey' : 'packed') : 'not optimised');
  })();`;
  const r = spawnSync(process.execPath, ['--import', 'tsx', '--allow-natives-syntax', '-e', code], { encoding: 'utf8' });
  return { out: r.stdout.trim(), err: r.stderr.trim() };
}

describe('the engine setting', () => {
  it('is known to this V8 (no warning), and after tuneEngine() optimised maps stay packed, where without it they are holey', () => {
    const tuned = holeyAfterOptimising(true);
    expect(tuned.err).toBe('');
    expect(tuned.out).toBe('packed');
    expect(holeyAfterOptimising(false).out).toBe('holey');
  });

  it('is made first by the server and the command line', () => {
    for (const file of ['main.ts', 'cli.ts']) {
      const source = readFileSync(new URL(`../../server/${file}`, import.meta.url), 'utf8');
      expect(source, file).toMatch(/function main\(\): (?:Promise<void>|void) \{\n {2}tuneEngine\(\);/);
    }
  });
});
