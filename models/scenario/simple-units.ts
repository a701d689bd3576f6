/**
 * The everyday units of dosing (ng…kg, nmol…mol, µL…L, s…week) and their quotients, converted
 * by exact rational factors without the general unit parser: most scenarios are written in
 * these, and the general parser costs a few hundred milliseconds to set up at start. A factor
 * is num/den of exact integers, so the division is correctly rounded.
 */

type Kind = 'mass' | 'substance' | 'volume' | 'time';

/** Each unit as an exact fraction of its kind's base (g, mol, L, s). */
const table: Record<string, { kind: Kind; num: bigint; den: bigint }> = {
  ng: { kind: 'mass', num: 1n, den: 1_000_000_000n },
  ug: { kind: 'mass', num: 1n, den: 1_000_000n },
  mg: { kind: 'mass', num: 1n, den: 1000n },
  g: { kind: 'mass', num: 1n, den: 1n },
  kg: { kind: 'mass', num: 1000n, den: 1n },
  nmol: { kind: 'substance', num: 1n, den: 1_000_000_000n },
  umol: { kind: 'substance', num: 1n, den: 1_000_000n },
  mmol: { kind: 'substance', num: 1n, den: 1000n },
  mol: { kind: 'substance', num: 1n, den: 1n },
  uL: { kind: 'volume', num: 1n, den: 1_000_000n },
  mL: { kind: 'volume', num: 1n, den: 1000n },
  dL: { kind: 'volume', num: 1n, den: 10n },
  L: { kind: 'volume', num: 1n, den: 1n },
  s: { kind: 'time', num: 1n, den: 1n },
  min: { kind: 'time', num: 60n, den: 1n },
  h: { kind: 'time', num: 3600n, den: 1n },
  day: { kind: 'time', num: 86_400n, den: 1n },
  week: { kind: 'time', num: 604_800n, den: 1n },
};

/** A unit as kinds with exponents and an exact scale. */
interface Simple {
  kinds: Partial<Record<Kind, number>>;
  num: bigint;
  den: bigint;
}

function single(name: string, power: 1 | -1): Simple | null {
  const u = table[name];
  if (!u) return null;
  return power === 1 ? { kinds: { [u.kind]: 1 }, num: u.num, den: u.den } : { kinds: { [u.kind]: -1 }, num: u.den, den: u.num };
}

/** "mg", "L/h", "/h", "h^-1" (mathjs's spelling after normaliseUnitText), or null for anything else. */
export function simpleUnit(text: string): Simple | null {
  const t = text.replace(/\s+/g, '');
  let m = /^([A-Za-z]+)$/.exec(t);
  if (m) return single(m[1], 1);
  m = /^([A-Za-z]+)\^-1$/.exec(t) ?? /^\/([A-Za-z]+)$/.exec(t);
  if (m) return single(m[1], -1);
  m = /^([A-Za-z]+)\/([A-Za-z]+)$/.exec(t);
  if (!m) return null;
  const a = single(m[1], 1);
  const b = single(m[2], -1);
  if (!a || !b) return null;
  const kinds: Partial<Record<Kind, number>> = { ...a.kinds };
  for (const [k, e] of Object.entries(b.kinds) as [Kind, number][]) kinds[k] = (kinds[k] ?? 0) + e;
  for (const k of Object.keys(kinds) as Kind[]) if (kinds[k] === 0) delete kinds[k];
  return { kinds, num: a.num * b.num, den: a.den * b.den };
}

function sameKinds(a: Simple, b: Simple): boolean {
  const keys = new Set([...Object.keys(a.kinds), ...Object.keys(b.kinds)]) as Set<Kind>;
  for (const k of keys) if ((a.kinds[k] ?? 0) !== (b.kinds[k] ?? 0)) return false;
  return true;
}

function gcd(a: bigint, b: bigint): bigint {
  while (b !== 0n) [a, b] = [b, a % b];
  return a;
}

/**
 * The factor taking one `from` to one `to`: 'unknown' when either is not an everyday unit
 * (the general parser decides), 'mismatch' when they differ in kind.
 */
export function simpleFactor(from: string, to: string): number | 'unknown' | 'mismatch' {
  const a = simpleUnit(from);
  const b = simpleUnit(to);
  if (!a || !b) return 'unknown';
  if (!sameKinds(a, b)) return 'mismatch';
  let num = a.num * b.den;
  let den = a.den * b.num;
  const g = gcd(num, den);
  num /= g;
  den /= g;
  // Exact integers below 2^53 divide correctly rounded; beyond that leave it to the general parser.
  if (num > 2n ** 53n || den > 2n ** 53n) return 'unknown';
  return Number(num) / Number(den);
}

/** The kind of a single everyday unit name, or null. */
export function simpleKind(name: string): Kind | null {
  return table[name]?.kind ?? null;
}
