/**
 * The field-level difference between two versions of a scenario (or any two JSON values),
 * for the store's history: `GET /api/scenarios/:id/diff`, the page's history view and the
 * command line. Pure: no I/O, the inputs are only read (values in the changes are shared
 * with them, not copied).
 *
 * Paths are written as everywhere else in the project (`formatPath` in problems.ts):
 * `title`, `doses[1].amount`, `compartments[0].volume.typical`. A key that is not a plain
 * identifier (letters, digits, `_`, `$`, not starting with a digit) is written as a quoted
 * JSON string in brackets: `subject["serum creatinine"]`, `["a.b"]` at the top level.
 * The root itself replaced by a value of another kind (or a different leaf) has path ''.
 *
 * Index convention for arrays: a `removed` element's path carries its index in `before`;
 * `added` and `changed` paths (and every path inside an element present in both versions)
 * carry indices in `after`. So `removed` values can be read from `before` at the last index,
 * `added` and `changed` ones from `after` at their path, and the elements kept (neither
 * removed nor added) correspond in order: the k-th kept one of `before` is the k-th of `after`.
 *
 * Arrays are aligned by a longest common subsequence of deep-equal elements, so a dose removed
 * from the middle reads as one `removed`, not as every later dose `changed`. Elements left over
 * between two matched ones are paired in order and compared field by field (an edited dose reads
 * as `doses[1].amount` changed); the surplus is added or removed. The LCS table costs
 * O(n·m) time and memory, so after trimming the common head and tail, a middle larger than
 * 2000 × 2000 elements is compared index by index instead.
 *
 * Leaves (strings, numbers, booleans, null) compare like Object.is, except that 0 and −0 are
 * equal: JSON text cannot tell them apart. Objects compare regardless of key order; a key whose
 * value is undefined counts as absent, as in JSON.
 */

export type ChangeKind = 'added' | 'removed' | 'changed';

export interface Change {
  path: string;
  change: ChangeKind;
  before?: unknown;
  after?: unknown;
}

type JsonObject = Readonly<Record<string, unknown>>;

/** Above this many cells the LCS table is not built (2000 × 2000, 8 MB of Uint16). */
const MAX_LCS_CELLS = 2000 * 2000;

/** Longest printed value in `describeChange`, in characters, the ellipsis included. */
const SHORT_JSON_LENGTH = 80;

export function diffJson(before: unknown, after: unknown): Change[] {
  const out: Change[] = [];
  diffValue(before, after, '', out);
  return out;
}

function diffValue(before: unknown, after: unknown, path: string, out: Change[]): void {
  if (Array.isArray(before) && Array.isArray(after)) diffArrays(before, after, path, out);
  else if (isObject(before) && isObject(after)) diffObjects(before, after, path, out);
  else if (!sameLeaf(before, after)) out.push({ path, change: 'changed', before, after });
}

function isObject(v: unknown): v is JsonObject {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

/** Object.is on JSON leaves, with 0 and −0 equal; containers of different kinds never match. */
function sameLeaf(a: unknown, b: unknown): boolean {
  return a === b || (Number.isNaN(a) && Number.isNaN(b));
}

// ---------------------------------------------------------------- objects

function diffObjects(before: JsonObject, after: JsonObject, path: string, out: Change[]): void {
  const beforeKeys = presentKeys(before);
  for (const key of presentKeys(after)) {
    const child = keyPath(path, key);
    if (beforeKeys.has(key)) diffValue(before[key], after[key], child, out);
    else out.push({ path: child, change: 'added', after: after[key] });
  }
  const afterKeys = presentKeys(after);
  for (const key of beforeKeys) {
    if (!afterKeys.has(key)) out.push({ path: keyPath(path, key), change: 'removed', before: before[key] });
  }
}

/** Own keys in insertion order, leaving out those whose value is undefined (JSON drops them). */
function presentKeys(o: JsonObject): Set<string> {
  return new Set(Object.keys(o).filter((k) => o[k] !== undefined));
}

const IDENTIFIER = /^[A-Za-z_$][A-Za-z0-9_$]*$/;

export function keyPath(parent: string, key: string): string {
  if (!IDENTIFIER.test(key)) return `${parent}[${JSON.stringify(key)}]`;
  return parent === '' ? key : `${parent}.${key}`;
}

function indexPath(parent: string, index: number): string {
  return `${parent}[${index}]`;
}

// ---------------------------------------------------------------- arrays

function diffArrays(before: readonly unknown[], after: readonly unknown[], path: string, out: Change[]): void {
  const [a, b] = elementIds(before, after);
  let head = 0;
  while (head < a.length && head < b.length && a[head] === b[head]) head++;
  let tail = 0;
  while (tail < a.length - head && tail < b.length - head && a[a.length - 1 - tail] === b[b.length - 1 - tail]) tail++;
  const oldEnd = a.length - tail;
  const newEnd = b.length - tail;
  const n = oldEnd - head;
  const m = newEnd - head;
  const matches = n * m <= MAX_LCS_CELLS ? lcsMatches(a.subarray(head, oldEnd), b.subarray(head, newEnd)) : [];
  // Walk the matched pairs (shifted back to whole-array indices) and a sentinel at the trimmed end.
  let prevOld = head;
  let prevNew = head;
  for (const [i, j] of [...matches.map(([i, j]) => [i + head, j + head]), [oldEnd, newEnd]]) {
    diffGap(before, after, [prevOld, i], [prevNew, j], path, out);
    prevOld = i + 1;
    prevNew = j + 1;
  }
}

/**
 * Old elements [o0, o1) and new ones [n0, n1) between two matches: paired in order and compared,
 * the surplus removed (at its index in `before`) or added (at its index in `after`).
 */
function diffGap(
  before: readonly unknown[],
  after: readonly unknown[],
  [o0, o1]: readonly [number, number],
  [n0, n1]: readonly [number, number],
  path: string,
  out: Change[],
): void {
  const paired = Math.min(o1 - o0, n1 - n0);
  for (let k = 0; k < paired; k++) diffValue(before[o0 + k], after[n0 + k], indexPath(path, n0 + k), out);
  for (let i = o0 + paired; i < o1; i++) out.push({ path: indexPath(path, i), change: 'removed', before: before[i] });
  for (let j = n0 + paired; j < n1; j++) out.push({ path: indexPath(path, j), change: 'added', after: after[j] });
}

/** Each element as a small integer, equal integers for deep-equal elements, so the LCS compares numbers. */
function elementIds(before: readonly unknown[], after: readonly unknown[]): [Uint32Array, Uint32Array] {
  const ids = new Map<string, number>();
  const idOf = (v: unknown): number => {
    const key = canonical(v);
    let id = ids.get(key);
    if (id === undefined) ids.set(key, (id = ids.size));
    return id;
  };
  return [Uint32Array.from(before, idOf), Uint32Array.from(after, idOf)];
}

/** A text equal for deep-equal values: object keys sorted, absent and undefined alike, 0 = −0. */
function canonical(v: unknown): string {
  if (Array.isArray(v)) return `[${v.map(canonical).join(',')}]`;
  if (isObject(v)) {
    const keys = [...presentKeys(v)].sort();
    return `{${keys.map((k) => `${JSON.stringify(k)}:${canonical(v[k])}`).join(',')}}`;
  }
  if (typeof v === 'string') return JSON.stringify(v);
  if (typeof v === 'number') return Object.is(v, -0) ? '0' : String(v);
  if (typeof v === 'boolean' || v === null) return String(v);
  // Not JSON (undefined, bigint, …): tagged with its type so 1n never matches 1.
  return `${typeof v}:${String(v)}`;
}

/**
 * Matched index pairs of a longest common subsequence of a and b, in increasing order.
 * Textbook dynamic programming (Wagner & Fischer 1974; Hunt & McIlroy 1976 for its use in diff):
 * L[i][j] = LCS length of a[i..] and b[j..], then a walk from (0, 0).
 */
function lcsMatches(a: Uint32Array, b: Uint32Array): Array<[number, number]> {
  const n = a.length;
  const m = b.length;
  const width = m + 1;
  // Entries never exceed min(n, m) ≤ 2000 under MAX_LCS_CELLS, so 16 bits suffice.
  const table = new Uint16Array((n + 1) * width);
  for (let i = n - 1; i >= 0; i--) {
    for (let j = m - 1; j >= 0; j--) {
      const at = i * width + j;
      table[at] = a[i] === b[j] ? table[at + width + 1] + 1 : Math.max(table[at + width], table[at + 1]);
    }
  }
  const matches: Array<[number, number]> = [];
  let i = 0;
  let j = 0;
  while (i < n && j < m) {
    if (a[i] === b[j]) matches.push([i++, j++]);
    else if (table[(i + 1) * width + j] >= table[i * width + j + 1]) i++;
    else j++;
  }
  return matches;
}

// ---------------------------------------------------------------- words

/**
 * One plain line per change, values as short JSON:
 * `doses[1].amount: "250 mg" → "500 mg"`, `doses[2]: added {"time":"24 h",…`.
 */
export function describeChange(c: Change): string {
  const where = c.path === '' ? '(whole document)' : c.path;
  switch (c.change) {
    case 'added':
      return `${where}: added ${shortJson(c.after)}`;
    case 'removed':
      return `${where}: removed ${shortJson(c.before)}`;
    case 'changed':
      return `${where}: ${shortJson(c.before)} → ${shortJson(c.after)}`;
  }
}

/** JSON text cut to 80 characters (code points, so no surrogate pair is split), the last one "…". */
export function shortJson(value: unknown): string {
  const text = JSON.stringify(value) ?? String(value);
  if (text.length <= SHORT_JSON_LENGTH) return text; // UTF-16 units are never fewer than code points
  const points: string[] = [];
  for (const ch of text) {
    points.push(ch);
    if (points.length > SHORT_JSON_LENGTH) return `${points.slice(0, SHORT_JSON_LENGTH - 1).join('')}…`;
  }
  return text;
}
