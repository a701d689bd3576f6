// A population proposal's share on the page is written as the command line writes it (one
// decimal, a trailing .0 dropped). Expected strings worked by hand; the CLI's own function is the
// second check, so the two cannot drift apart.
import { describe, expect, it } from 'vitest';
import { percentWithError } from '../../client/src/propose-view.ts';
import { percentWithError as cliPercent } from '../../server/propose-cli.ts';

describe('percentWithError (page)', () => {
  const cases: [{ probability: number; standardError: number }, string][] = [
    [{ probability: 0.83, standardError: 0.0168 }, '83% ± 1.7'],
    [{ probability: 0.8345, standardError: 0.0119 }, '83.5% ± 1.2'],
    [{ probability: 1, standardError: 0 }, '100% ± 0'],
  ];
  it('matches the hand-written strings and the command line', () => {
    for (const [x, text] of cases) {
      expect(percentWithError(x)).toBe(text);
      expect(cliPercent(x)).toBe(text);
    }
  });
});
