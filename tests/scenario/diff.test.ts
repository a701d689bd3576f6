/**
 * The field-level diff of two scenario versions (models/scenario/diff.ts): worked examples
 * computed by hand, then properties over random JSON — the changes rebuild the new version from
 * the old one, and every `before`/`after` is the value found at its path.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { type Change, describeChange, diffJson, shortJson } from '../../models/scenario/diff.ts';

const dose = (time: string, amount = '250 mg') => ({ time, amount, into: 'gut' });

describe('worked examples', () => {
  it('equal inputs give no changes, whatever the key order', () => {
    // worked by hand; key order does not matter in JSON objects (RFC 8259 §4: unordered)
    const a = { title: 'Demo', doses: [dose('0 h')], units: { amount: 'mg', time: 'h' } };
    const b = { units: { time: 'h', amount: 'mg' }, doses: [dose('0 h')], title: 'Demo' };
    expect(diffJson(a, a)).toEqual([]);
    expect(diffJson(a, b)).toEqual([]);
    expect(diffJson(null, null)).toEqual([]);
    expect(diffJson([], [])).toEqual([]);
  });

  it('a dose amount edit reads as one field changed', () => {
    // worked by hand: doses[0] is equal, doses[1] is paired with itself and differs in amount only
    const a = { doses: [dose('0 h'), dose('12 h')] };
    const b = { doses: [dose('0 h'), dose('12 h', '500 mg')] };
    expect(diffJson(a, b)).toEqual([{ path: 'doses[1].amount', change: 'changed', before: '250 mg', after: '500 mg' }]);
  });

  it('a dose removed from the middle of four is one removal, not three edits', () => {
    // worked by hand: LCS keeps doses 0, 2, 3; the one left over is doses[1] of before
    const four = [dose('0 h'), dose('12 h'), dose('24 h'), dose('36 h')];
    const a = { doses: four };
    const b = { doses: [four[0], four[2], four[3]] };
    expect(diffJson(a, b)).toEqual([{ path: 'doses[1]', change: 'removed', before: dose('12 h') }]);
    // and back again: one addition at its index in the new version
    expect(diffJson(b, a)).toEqual([{ path: 'doses[1]', change: 'added', after: dose('12 h') }]);
  });

  it('a dose removed and a later one edited: the LCS keeps the untouched one aligned', () => {
    // worked by hand: old middle [12 h, 24 h, 36 h], new [24 h, 36 h at 500 mg]; the LCS matches 24 h,
    // so 12 h is removed at old index 1 and 36 h is paired with its edit at new index 2
    const four = [dose('0 h'), dose('12 h'), dose('24 h'), dose('36 h')];
    const b = { doses: [four[0], four[2], dose('36 h', '500 mg')] };
    expect(diffJson({ doses: four }, b)).toEqual([
      { path: 'doses[1]', change: 'removed', before: dose('12 h') },
      { path: 'doses[2].amount', change: 'changed', before: '250 mg', after: '500 mg' },
    ]);
  });

  it('a compartment added at the end or at the front', () => {
    // worked by hand
    const central = { name: 'central', volume: { typical: '20 L' } };
    const peripheral = { name: 'peripheral', volume: { typical: '40 L' } };
    expect(diffJson({ compartments: [central] }, { compartments: [central, peripheral] })).toEqual([
      { path: 'compartments[1]', change: 'added', after: peripheral },
    ]);
    expect(diffJson({ compartments: [central] }, { compartments: [peripheral, central] })).toEqual([
      { path: 'compartments[0]', change: 'added', after: peripheral },
    ]);
  });

  it('a nested field deep inside an array element', () => {
    // worked by hand
    const a = { compartments: [{ name: 'central', volume: { typical: '20 L', cv: 0.2 } }] };
    const b = { compartments: [{ name: 'central', volume: { typical: '25 L', cv: 0.2 } }] };
    expect(diffJson(a, b)).toEqual([
      { path: 'compartments[0].volume.typical', change: 'changed', before: '20 L', after: '25 L' },
    ]);
  });

  it('a renamed key is the new key added, then the old one removed', () => {
    // worked by hand: keys in the order of `after`, then the removed ones
    const a = { subject: { weight: '70 kg', age: '40 y' } };
    const b = { subject: { mass: '70 kg', age: '40 y' } };
    expect(diffJson(a, b)).toEqual([
      { path: 'subject.mass', change: 'added', after: '70 kg' },
      { path: 'subject.weight', change: 'removed', before: '70 kg' },
    ]);
  });

  it('a change of type is one change with the whole values', () => {
    // worked by hand
    expect(diffJson({ output: { thresholds: ['2 mg/L'] } }, { output: { thresholds: 'none' } })).toEqual([
      { path: 'output.thresholds', change: 'changed', before: ['2 mg/L'], after: 'none' },
    ]);
    expect(diffJson({ a: { x: 1 } }, { a: [1] })).toEqual([{ path: 'a', change: 'changed', before: { x: 1 }, after: [1] }]);
    expect(diffJson({ a: 1 }, { a: '1' })).toEqual([{ path: 'a', change: 'changed', before: 1, after: '1' }]);
    expect(diffJson({ a: null }, { a: false })).toEqual([{ path: 'a', change: 'changed', before: null, after: false }]);
  });

  it('the root replaced by another kind of value has path ""', () => {
    // worked by hand
    expect(diffJson({ title: 'x' }, 'x')).toEqual([{ path: '', change: 'changed', before: { title: 'x' }, after: 'x' }]);
    expect(diffJson(1, 2)).toEqual([{ path: '', change: 'changed', before: 1, after: 2 }]);
    expect(diffJson([1, 2], [1])).toEqual([{ path: '[1]', change: 'removed', before: 2 }]);
  });

  it('leaves compare like Object.is, except 0 and −0', () => {
    // common practice: JSON text cannot write −0 apart from 0 (RFC 8259 §6); NaN equals itself as in Object.is
    expect(diffJson({ a: 0 }, { a: -0 })).toEqual([]);
    expect(diffJson({ a: Number.NaN }, { a: Number.NaN })).toEqual([]);
    expect(diffJson({ a: 0.1 + 0.2 }, { a: 0.3 })).toHaveLength(1);
    // a key whose value is undefined is absent, as JSON.stringify writes it
    expect(diffJson({ a: 1, b: undefined }, { a: 1 })).toEqual([]);
  });

  it('nested arrays: a removal in one row, an addition in the next', () => {
    // worked by hand: rows paired in order, inside each the LCS keeps [1, 3] and [4, 5, 6]
    expect(diffJson({ m: [[1, 2, 3], [4, 5, 6]] }, { m: [[1, 3], [4, 5, 6, 7]] })).toEqual([
      { path: 'm[0][1]', change: 'removed', before: 2 },
      { path: 'm[1][3]', change: 'added', after: 7 },
    ]);
  });

  it('indices: removed ones in the old version, everything else in the new', () => {
    // worked by hand: 9 matched (old 0 ↔ new 1); 7 added at new 0; old [1, 2] paired with new [1]
    // at new index 2, where 2 is removed at its old index 1
    expect(diffJson([9, [1, 2]], [7, 9, [1]])).toEqual([
      { path: '[0]', change: 'added', after: 7 },
      { path: '[2][1]', change: 'removed', before: 2 },
    ]);
  });

  it('two swapped leaves: one removed, one added', () => {
    // worked by hand: the LCS has length 1; ties drop from the old version first
    expect(diffJson(['a', 'b'], ['b', 'a'])).toEqual([
      { path: '[0]', change: 'removed', before: 'a' },
      { path: '[1]', change: 'added', after: 'a' },
    ]);
  });

  it('keys that are not plain identifiers are quoted as JSON strings', () => {
    // common practice (JavaScript bracket notation with a JSON string literal)
    expect(diffJson({ subject: { 'serum creatinine': '1 mg/dL' } }, { subject: { 'serum creatinine': '1.2 mg/dL' } })).toEqual([
      { path: 'subject["serum creatinine"]', change: 'changed', before: '1 mg/dL', after: '1.2 mg/dL' },
    ]);
    const paths = (a: unknown, b: unknown) => diffJson(a, b).map((c) => c.path);
    expect(paths({}, { 'say "hi"': 1 })).toEqual(['["say \\"hi\\""]']);
    expect(paths({}, { Körpergewicht: 1 })).toEqual(['["Körpergewicht"]']);
    expect(paths({ x: {} }, { x: { 'a.b': 1, '1st': 2, '': 3, _ok$: 4 } })).toEqual([
      'x["a.b"]',
      'x["1st"]',
      'x[""]',
      'x._ok$',
    ]);
    // a key written like an index stays a string key: ["3"], never [3]
    expect(paths({ x: {} }, { x: { 3: 'c' } })).toEqual(['x["3"]']);
  });

  it('unicode values come through whole', () => {
    // worked by hand
    expect(diffJson({ notes: 'µg → mg' }, { notes: 'µg → mg 😀' })).toEqual([
      { path: 'notes', change: 'changed', before: 'µg → mg', after: 'µg → mg 😀' },
    ]);
  });

  it('a middle past 2000 × 2000 elements is compared index by index', () => {
    // worked by hand: shifting by one (insert at the front, drop the last) is two changes with
    // the LCS, and every element changed index by index once the table would be too large
    const shifted = (n: number) => {
      const before = Array.from({ length: n }, (_, i) => i);
      const after = [-1, ...before.slice(0, n - 1)];
      return diffJson(before, after);
    };
    expect(shifted(1001)).toEqual([
      { path: '[0]', change: 'added', after: -1 },
      { path: '[1000]', change: 'removed', before: 1000 },
    ]);
    const big = shifted(2501);
    expect(big).toHaveLength(2501);
    expect(big[0]).toEqual({ path: '[0]', change: 'changed', before: 0, after: -1 });
    expect(big[2500]).toEqual({ path: '[2500]', change: 'changed', before: 2500, after: 2499 });
    // the common head and tail are trimmed first, so a long list with one edit still aligns
    const long = Array.from({ length: 5000 }, (_, i) => i);
    const edited = [...long.slice(0, 2500), ...long.slice(2501)];
    expect(diffJson(long, edited)).toEqual([{ path: '[2500]', change: 'removed', before: 2500 }]);
  });
});

describe('describeChange', () => {
  it('one line per change, values as short JSON', () => {
    // worked by hand
    expect(describeChange({ path: 'doses[1].amount', change: 'changed', before: '250 mg', after: '500 mg' })).toBe(
      'doses[1].amount: "250 mg" → "500 mg"',
    );
    expect(describeChange({ path: 'doses[2]', change: 'added', after: dose('24 h') })).toBe(
      'doses[2]: added {"time":"24 h","amount":"250 mg","into":"gut"}',
    );
    expect(describeChange({ path: 'subject.weight', change: 'removed', before: '70 kg' })).toBe(
      'subject.weight: removed "70 kg"',
    );
    expect(describeChange({ path: '', change: 'changed', before: 'a', after: { x: 1 } })).toBe(
      '(whole document): "a" → {"x":1}',
    );
    expect(describeChange({ path: 'a', change: 'changed', before: null, after: undefined })).toBe('a: null → undefined');
  });

  it('cuts long values at 80 characters with an ellipsis, between code points', () => {
    // worked by hand: {"time":"24 h", (15) "amount":"500 mg", (18) "into":"gut", (13) "note":" (8) = 54,
    // then 25 x make 79, then the ellipsis
    const long = { time: '24 h', amount: '500 mg', into: 'gut', note: 'x'.repeat(100) };
    const text = `{"time":"24 h","amount":"500 mg","into":"gut","note":"${'x'.repeat(25)}…`;
    expect(shortJson(long)).toBe(text);
    expect(describeChange({ path: 'doses[2]', change: 'added', after: long })).toBe(`doses[2]: added ${text}`);
    // an astral character is one code point of two UTF-16 units: the quote and 78 faces, then …
    expect(shortJson('😀'.repeat(100))).toBe(`"${'😀'.repeat(78)}…`);
    expect(shortJson('😀'.repeat(78))).toBe(`"${'😀'.repeat(78)}"`); // 80 code points, 158 UTF-16 units: whole
    expect(shortJson('x'.repeat(78))).toBe(`"${'x'.repeat(78)}"`); // exactly 80: not cut
  });
});

// ---------------------------------------------------------------- properties

type Step = string | number;

/** An independent reader of the path syntax: .key, [index], ["json string"]. */
function parsePath(path: string): Step[] {
  const steps: Step[] = [];
  let pos = 0;
  while (pos < path.length) {
    if (path[pos] === '[' && path[pos + 1] === '"') {
      let end = pos + 2;
      while (path[end] !== '"') end += path[end] === '\\' ? 2 : 1;
      steps.push(JSON.parse(path.slice(pos + 1, end + 1)) as string);
      expect(path[end + 1]).toBe(']');
      pos = end + 2;
    } else if (path[pos] === '[') {
      const end = path.indexOf(']', pos);
      steps.push(Number(path.slice(pos + 1, end)));
      pos = end + 1;
    } else {
      const start = path[pos] === '.' ? pos + 1 : pos;
      const m = /^[A-Za-z_$][A-Za-z0-9_$]*/.exec(path.slice(start));
      if (!m) throw new Error(`unreadable path ${path} at ${pos}`);
      steps.push(m[0]);
      pos = start + m[0].length;
    }
  }
  return steps;
}

function readAt(root: unknown, steps: readonly Step[]): unknown {
  let cur: unknown = root;
  for (const s of steps) {
    if (typeof s === 'number') {
      if (!Array.isArray(cur) || s >= cur.length) throw new Error(`no element ${s}`);
      cur = cur[s];
    } else {
      if (typeof cur !== 'object' || cur === null || Array.isArray(cur) || !Object.hasOwn(cur, s)) throw new Error(`no key ${s}`);
      cur = (cur as Record<string, unknown>)[s];
    }
  }
  return cur;
}

interface Located {
  steps: Step[];
  c: Change;
}

const childChanges = (changes: readonly Located[], key: Step): Located[] =>
  changes.filter((l) => l.steps[0] === key).map((l) => ({ steps: l.steps.slice(1), c: l.c }));

const isDirect = (l: Located, kind: Change['change']) => l.steps.length === 1 && l.c.change === kind;

/**
 * Rebuilds the new version from the old one and the changes, checking each `before` on the way:
 * removed at old indices, added at new ones, the kept elements of both in the same order.
 */
function rebuild(node: unknown, changes: readonly Located[]): unknown {
  const here = changes.filter((l) => l.steps.length === 0);
  if (here.length > 0) {
    expect(changes).toHaveLength(1);
    expect(here[0].c.change).toBe('changed');
    expect(same(node, here[0].c.before)).toBe(true);
    return here[0].c.after;
  }
  if (Array.isArray(node)) return rebuildArray(node, changes);
  if (typeof node === 'object' && node !== null) return rebuildObject(node as Record<string, unknown>, changes);
  expect(changes).toEqual([]);
  return node;
}

function rebuildArray(node: readonly unknown[], changes: readonly Located[]): unknown[] {
  const removed = new Set<number>();
  const added = new Map<number, unknown>();
  for (const l of changes) {
    if (isDirect(l, 'removed')) {
      expect(same(node[l.steps[0] as number], l.c.before)).toBe(true);
      removed.add(l.steps[0] as number);
    } else if (isDirect(l, 'added')) added.set(l.steps[0] as number, l.c.after);
    else expect(typeof l.steps[0]).toBe('number');
  }
  const kept = node.map((_, i) => i).filter((i) => !removed.has(i));
  const rest = changes.filter((l) => !isDirect(l, 'removed') && !isDirect(l, 'added'));
  const out: unknown[] = [];
  let next = 0;
  for (let j = 0; j < kept.length + added.size; j++) {
    if (added.has(j)) out.push(added.get(j));
    else out.push(rebuild(node[kept[next++]], childChanges(rest, j)));
  }
  expect(next).toBe(kept.length);
  return out;
}

function rebuildObject(node: Record<string, unknown>, changes: readonly Located[]): Record<string, unknown> {
  const out: Record<string, unknown> = {};
  // defineProperty, so that a key "__proto__" stays an ordinary key
  const put = (k: string, v: unknown) => Object.defineProperty(out, k, { value: v, enumerable: true, writable: true, configurable: true });
  const removed = new Set<string>();
  for (const l of changes) {
    const key = l.steps[0];
    expect(typeof key).toBe('string');
    if (isDirect(l, 'removed')) {
      expect(same(node[key as string], l.c.before)).toBe(true);
      removed.add(key as string);
    } else if (isDirect(l, 'added')) {
      expect(Object.hasOwn(node, key as string)).toBe(false);
      put(key as string, l.c.after);
    }
  }
  const rest = changes.filter((l) => !isDirect(l, 'removed') && !isDirect(l, 'added'));
  for (const k of Object.keys(node)) if (!removed.has(k)) put(k, rebuild(node[k], childChanges(rest, k)));
  return out;
}

/** Deep equality of JSON values through their text (JSON.stringify writes −0 as 0). */
function same(a: unknown, b: unknown): boolean {
  return JSON.stringify(sorted(a)) === JSON.stringify(sorted(b));
}

function sorted(v: unknown): unknown {
  // tagged, so that {} and [] stay apart
  if (Array.isArray(v)) return ['array', v.map(sorted)];
  if (typeof v !== 'object' || v === null) return v;
  const o = v as Record<string, unknown>;
  const keys = Object.keys(o).filter((k) => o[k] !== undefined);
  return ['object', keys.sort().map((k) => [k, sorted(o[k])])];
}

function checkDiff(a: unknown, b: unknown): void {
  const changes = diffJson(a, b);
  const located = changes.map((c) => ({ steps: parsePath(c.path), c }));
  // every added or changed value is what the new version holds at that path
  for (const l of located) if (l.c.change !== 'removed') expect(same(readAt(b, l.steps), l.c.after)).toBe(true);
  expect(same(rebuild(a, located), b)).toBe(true);
  expect(diffJson(a, a)).toEqual([]);
  if (same(a, b)) expect(changes).toEqual([]);
}

// A small alphabet, so arrays share many equal elements and the alignment has choices to make.
const smallJson = fc.letrec((tie) => ({
  value: fc.oneof(
    { maxDepth: 3 },
    fc.constantFrom<unknown>(0, 1, 2, 'a', 'b', null, true),
    fc.array(tie('value'), { maxLength: 6 }),
    fc.dictionary(fc.constantFrom('x', 'y', 'dose amount', '"q"', '1'), tie('value'), { maxKeys: 3 }),
  ),
})).value;

describe('properties', () => {
  it('the changes rebuild b from a, for unrelated random JSON', () => {
    // common practice: a diff is correct when applying it to the old value gives the new one
    fc.assert(fc.property(fc.jsonValue({ maxDepth: 4 }), fc.jsonValue({ maxDepth: 4 }), checkDiff), { numRuns: 300 });
  });

  it('the changes rebuild b from a, for values from a small alphabet', () => {
    // common practice, as above, with many equal elements so that the LCS walk meets ties
    fc.assert(fc.property(smallJson, smallJson, checkDiff), { numRuns: 500 });
  });

  it('the changes rebuild b from a, for b an edit of a', () => {
    // common practice: near versions, the case the history view shows
    const edited = smallJson.chain((a) => fc.tuple(fc.constant(a), editOf(a)));
    fc.assert(fc.property(edited, ([a, b]) => checkDiff(a, b)), { numRuns: 500 });
  });

  it('one element removed from or inserted into a list is exactly one change', () => {
    // worked by hand (LCS of length n − 1 exists, so nothing else can differ); the index may be
    // another of equal neighbours, so the value is checked, not the index
    const listAndIndex = fc
      .array(smallJson, { minLength: 1, maxLength: 12 })
      .chain((list) => fc.tuple(fc.constant(list), fc.nat({ max: list.length - 1 })));
    fc.assert(
      fc.property(listAndIndex, ([list, k]) => {
        const shorter = [...list.slice(0, k), ...list.slice(k + 1)];
        const removal = diffJson(list, shorter);
        expect(removal).toHaveLength(1);
        expect(removal[0].change).toBe('removed');
        expect(same(removal[0].before, list[k])).toBe(true);
        const insertion = diffJson(shorter, list);
        expect(insertion).toHaveLength(1);
        expect(insertion[0].change).toBe('added');
        expect(same(insertion[0].after, list[k])).toBe(true);
      }),
      { numRuns: 500 },
    );
  });
});

/** A random edit of a: within arrays drop, insert or replace one element; within objects one key. */
function editOf(a: unknown): fc.Arbitrary<unknown> {
  if (Array.isArray(a)) {
    const k = fc.nat({ max: a.length });
    return fc.oneof(
      k.chain((i) => smallJson.map((v) => [...a.slice(0, i), v, ...a.slice(i)])),
      k.map((i) => [...a.slice(0, i), ...a.slice(i + 1)]),
      a.length === 0 ? smallJson : k.chain((i) => editOf(a[Math.min(i, a.length - 1)]).map((v) => a.map((x, j) => (j === Math.min(i, a.length - 1) ? v : x)))),
    );
  }
  if (typeof a === 'object' && a !== null) {
    const o = a as Record<string, unknown>;
    const keys = Object.keys(o);
    if (keys.length === 0) return smallJson.map((v) => ({ x: v }));
    return fc.constantFrom(...keys).chain((key) => editOf(o[key]).map((v) => ({ ...o, [key]: v })));
  }
  return smallJson;
}
