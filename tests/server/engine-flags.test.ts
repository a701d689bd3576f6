// The engine setting of server/engine-flags.ts: this Node's V8 knows it, it does what the
// module says (an optimised Array.prototype.map then makes the same kind of array as the
// unoptimised one), and the server and the command line make it before anything else.
import { spawnSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { ENGINE_FLAGS } from '../../server/engine-flags.ts';

/** Whether an array made by f's map once f is optimised is "holey", with the flags set or not (V8's test natives). */
function holeyAfterOptimising(tuned: boolean): { out: string; err: string } {
  const code = `${tuned ? `for (const f of ${JSON.stringify(ENGINE_FLAGS)}) require('v8').setFlagsFromString(f);` : ''}
    function f(a) { return a.map((x) => x + 1); }
    %PrepareFunctionForOptimization(f); f([1, 2, 3]); f([1, 2, 3]); %OptimizeFunctionOnNextCall(f);
    const r = f([1, 2, 3]);
    console.log(%ActiveTierIsTurbofan(f) ? (%HasHoleyElements(r) ? 'holey' : 'packed') : 'not optimised');`;
  const r = spawnSync(process.execPath, ['--allow-natives-syntax', '-e', code], { encoding: 'utf8' });
  return { out: r.stdout.trim(), err: r.stderr.trim() };
}

describe('the engine setting', () => {
  it('is known to this V8 and keeps optimised maps packed, where without it they are holey', () => {
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
