/** Shares (coefficients of variation, fractions of an interval) as users write them: 0.3 or "30%". */

/**
 * A share written as a fraction (0.3) or a percentage ("30%"), from 0 to `largest` (as a
 * fraction); a bare number above `largest` that reads as a percentage says so.
 */
export function readShare(value: number | string, path: string, r: { fail(path: string, message: string): void }, what: string, largest = 1): number | null {
  const percent = typeof value === 'string' ? /^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(%?)\s*$/.exec(value) : null;
  if (typeof value === 'string' && !percent) {
    r.fail(path, `expected ${what} as a fraction (0.3) or a percentage ("30%"), got '${value.trim()}'`);
    return null;
  }
  const share = percent ? Number(percent[1]) / (percent[2] === '%' ? 100 : 1) : (value as number);
  if (share >= 0 && share <= largest) return share;
  const written = percent ? `'${(value as string).trim()}'` : String(value);
  if (share < 0) {
    r.fail(path, `must not be negative, got ${written}`);
    return null;
  }
  const hint = !percent?.[2] && share > largest && share <= 100 * largest ? `; ${written} looks like a percentage — write "${share}%" or ${share / 100}` : '';
  r.fail(path, `must be at most ${largest} (${largest * 100}%), got ${written}${hint}`);
  return null;
}
