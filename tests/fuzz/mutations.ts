/**
 * Mutated scenarios for fuzzing: a bundled sample with one to four changes anywhere in its
 * JSON tree — numbers from 1e-300 to 1e308 of either sign, quantities with odd or wrong
 * units, wrong types, deleted or unknown fields, duplicated or emptied lists, other unit
 * systems — and the check every answer must pass: a result whose own checks hold, or a
 * list of problems that each name a path.
 */
import fc from 'fast-check';
import { readFileSync, readdirSync } from 'node:fs';

type Json = null | boolean | number | string | Json[] | { [key: string]: Json };

export const samples: Json[] = readdirSync('samples')
  .filter((f) => f.endsWith('.json'))
  .sort()
  .map((f) => JSON.parse(readFileSync(`samples/${f}`, 'utf8')) as { [key: string]: Json })
  // A population turns each report into a thousand runs; populations have their own tests (tests/population).
  .map(({ population: _population, ...single }) => single);

/** Every path in a JSON tree, the root excluded. */
function pathsOf(value: Json, prefix: (string | number)[] = [], out: (string | number)[][] = []): (string | number)[][] {
  if (Array.isArray(value)) {
    value.forEach((v, i) => {
      out.push([...prefix, i]);
      pathsOf(v, [...prefix, i], out);
    });
  } else if (value !== null && typeof value === 'object') {
    for (const [k, v] of Object.entries(value)) {
      out.push([...prefix, k]);
      pathsOf(v, [...prefix, k], out);
    }
  }
  return out;
}

const magnitude = fc
  .tuple(fc.integer({ min: -300, max: 308 }), fc.double({ min: 1, max: 9.99, noNaN: true }), fc.boolean())
  .map(([e, m, negative]) => (negative ? -1 : 1) * Number(`${m}e${e}`))
  .filter(Number.isFinite);

const units = ['mg', 'g', 'ug', 'mmol', 'L', 'mL', 'dL', 'h', 'min', 'day', 's', 'ns', 'year', '1/h', '/h', 'per h', 'h^-1', 'L/h', 'mL/min', 'mg/h', 'mg/L', 'ug/mL', 'LL', 'kg', '%', 'm', 'dm*dm*dm', ''];

const quantityText = fc
  .tuple(magnitude, fc.constantFrom(...units), fc.constantFrom(' ', '', '  '))
  .map(([v, u, space]) => `${v}${space}${u}`);

const replacement: fc.Arbitrary<Json> = fc.oneof(
  { weight: 4, arbitrary: magnitude },
  { weight: 1, arbitrary: fc.constantFrom<Json>(0, -0, 1, -1, 1e-300, 1e308, -1e308, 5e-324, 0.5, 100, 1e6) },
  { weight: 4, arbitrary: quantityText },
  { weight: 1, arbitrary: fc.constantFrom<Json>(null, true, false, [], {}, '', 'central', 'gut', 'auto', 'euler', '\u001b[31mred', 'x'.repeat(300)) },
  { weight: 1, arbitrary: fc.integer({ min: -5, max: 100_000 }) },
);

export type Mutation =
  | { kind: 'replace'; at: number; value: Json }
  | { kind: 'rescale'; at: number; power: number }
  | { kind: 'delete'; at: number }
  | { kind: 'duplicate'; at: number }
  | { kind: 'unknown-field'; at: number }
  | { kind: 'units'; field: 'amount' | 'volume' | 'time'; unit: string }
  | { kind: 'solver'; method: string; rtol: number };

const mutation: fc.Arbitrary<Mutation> = fc.oneof(
  { weight: 8, arbitrary: fc.record({ kind: fc.constant('replace' as const), at: fc.nat(), value: replacement }) },
  // Keeps the unit and multiplies the number by 10^power: mostly valid scenarios at extreme magnitudes.
  { weight: 8, arbitrary: fc.record({ kind: fc.constant('rescale' as const), at: fc.nat(), power: fc.integer({ min: -300, max: 300 }) }) },
  { weight: 2, arbitrary: fc.record({ kind: fc.constant('delete' as const), at: fc.nat() }) },
  { weight: 1, arbitrary: fc.record({ kind: fc.constant('duplicate' as const), at: fc.nat() }) },
  { weight: 1, arbitrary: fc.record({ kind: fc.constant('unknown-field' as const), at: fc.nat() }) },
  {
    weight: 1,
    arbitrary: fc.record({
      kind: fc.constant('units' as const),
      field: fc.constantFrom('amount' as const, 'volume' as const, 'time' as const),
      unit: fc.constantFrom('ug', 'g', 'mmol', 'mL', 'dL', 'min', 'day', 's', 'kg', 'L', 'h', 'mg'),
    }),
  },
  {
    weight: 2,
    arbitrary: fc.record({
      kind: fc.constant('solver' as const),
      method: fc.constantFrom('auto', 'exact', 'dopri5', 'dop853', 'rosenbrock', 'euler', 'heun', 'rk4', 'abm2'),
      rtol: fc.constantFrom(1e-3, 1e-6, 1e-8, 1e-10, 1e-12),
    }),
  },
);

function parentAndKey(root: Json, path: (string | number)[]): { parent: Json[] | { [key: string]: Json }; key: string | number } {
  let node = root as Json[] | { [key: string]: Json };
  for (const step of path.slice(0, -1)) node = (node as Record<string | number, Json>)[step] as Json[] | { [key: string]: Json };
  return { parent: node, key: path[path.length - 1] };
}

/** Applies one mutation in place (the root is a fresh copy of a sample). */
export function mutate(root: { [key: string]: Json }, m: Mutation): void {
  if (m.kind === 'units') {
    root.units = { ...((root.units as { [key: string]: Json } | undefined) ?? {}), [m.field]: m.unit };
    return;
  }
  if (m.kind === 'solver') {
    const fixed = ['euler', 'heun', 'rk4', 'abm2'].includes(m.method);
    root.solver = fixed ? { method: m.method, step: m.rtol * 1e4 } : { method: m.method, rtol: m.rtol, atol: m.rtol * 1e-2 };
    return;
  }
  const paths = pathsOf(root);
  if (paths.length === 0) return;
  const { parent, key } = parentAndKey(root, paths[m.at % paths.length]);
  const target = parent as Record<string | number, Json>;
  if (m.kind === 'replace') target[key] = m.value;
  else if (m.kind === 'rescale') {
    const leaves = paths.filter((p) => {
      const v = parentAndKey(root, p);
      const x = (v.parent as Record<string | number, Json>)[v.key];
      return typeof x === 'number' || (typeof x === 'string' && /^\s*[-+]?[\d.]/.test(x));
    });
    if (leaves.length === 0) return;
    const leaf = parentAndKey(root, leaves[m.at % leaves.length]);
    const holder = leaf.parent as Record<string | number, Json>;
    const x = holder[leaf.key];
    if (typeof x === 'number') holder[leaf.key] = x * 10 ** m.power;
    else if (typeof x === 'string') holder[leaf.key] = x.replace(/^\s*([-+]?[\d.]+(?:e[-+]?\d+)?)/i, (n) => String(Number(n) * 10 ** m.power));
  }
  else if (m.kind === 'delete') {
    if (Array.isArray(parent)) parent.splice(key as number, 1);
    else delete target[key];
  } else if (m.kind === 'duplicate') {
    if (Array.isArray(parent)) parent.push(structuredClone(parent[key as number]));
    else target[`${key}`] = structuredClone(target[key]);
  } else {
    const value = target[key];
    if (value !== null && typeof value === 'object' && !Array.isArray(value)) value.notAField = 1;
    else if (!Array.isArray(parent)) parent.notAField = 1;
  }
}

export const mutatedScenario: fc.Arbitrary<{ sample: number; mutations: Mutation[]; scenario: Json }> = fc
  .tuple(fc.nat({ max: samples.length - 1 }), fc.array(mutation, { minLength: 1, maxLength: 4 }))
  .map(([sample, mutations]) => {
    const scenario = structuredClone(samples[sample]) as { [key: string]: Json };
    for (const m of mutations) mutate(scenario, m);
    return { sample, mutations, scenario };
  });

/** What is wrong with one answer (status and parsed JSON body), or null when it is acceptable. */
export function answerDefect(status: number, body: unknown): string | null {
  if (status === 200) {
    const b = body as { diagnostics?: { massBalance?: { relativeError?: unknown; dosed?: unknown; remaining?: unknown; eliminated?: unknown } } };
    const mb = b?.diagnostics?.massBalance;
    if (!mb) return 'a 200 answer without diagnostics.massBalance';
    for (const k of ['dosed', 'remaining', 'eliminated', 'relativeError'] as const) {
      if (typeof mb[k] !== 'number' || !Number.isFinite(mb[k])) return `a 200 answer whose massBalance.${k} is ${JSON.stringify(mb[k])}`;
    }
    // The engine refuses a balance beyond 1e-9 (models/figures/mass-balance.ts).
    if ((mb.relativeError as number) > 1e-9) return `a 200 answer whose mass balance fails (${mb.relativeError})`;
    return null;
  }
  if (status === 400 || status === 422) {
    const problems = (body as { problems?: unknown })?.problems;
    if (!Array.isArray(problems) || problems.length === 0) return `a ${status} answer without a problem list`;
    for (const p of problems) {
      if (typeof p?.path !== 'string' || typeof p?.message !== 'string' || p.message === '') return `a malformed problem ${JSON.stringify(p)}`;
      if (/\n\s+at |\.ts:\d+/.test(p.message)) return `a stack trace in a problem: ${p.message}`;
    }
    return null;
  }
  return `status ${status}: ${JSON.stringify(body).slice(0, 300)}`;
}
