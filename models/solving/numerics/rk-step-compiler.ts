/**
 * Compiles a step kernel: the sparse rows of an unpacked tableau and a system's
 * DerivativeCode become one straight-line function per step phase, with every state
 * component a local variable (no loops, no array traffic between stages). It performs
 * exactly the operations of interpretedKernel in the same order, so both give the same
 * bits; only the speed differs (measured in `npm run bench`).
 *
 * The source is built from numbers and indices only (coefficients as shortest round-trip
 * literals, parameters read from a Float64Array), never from user text. Where code
 * generation is not allowed (a page whose Content-Security-Policy forbids it), or the
 * state is too large for straight-line code to pay, compiledKernel returns null and the
 * engine interprets the rows instead.
 */
import { codeGenerationEnabled, compileSource, index as idx, literal as lit } from './generated-code';
import type { DerivativeCode } from './ode-system';
import type { SparseRow, StepKernel, UnpackedTableau, Work } from './rk-step';

/** Above this state size the unrolled code grows large and stops paying; the interpreter takes over. */
export const MAX_COMPILED_DIMENSION = 48;

/**
 * The compiled phases close over fixed arrays: the work arrays of (tableau, n) and one
 * parameter and one input buffer per model shape, into which each system's values are loaded
 * when an integration starts. One closure per shape lets the optimiser treat every array
 * as a constant; the values in them still change freely.
 */
interface CompiledInstance {
  readonly p: Float64Array;
  readonly u: Float64Array;
  readonly attempt: StepKernel['attempt'];
  readonly complete: StepKernel['complete'];
}

type InstanceFactory = (
  p: Float64Array,
  u: Float64Array,
  y0: Float64Array,
  k: Float64Array,
  y1: Float64Array,
  yStiff: Float64Array,
  scale: Float64Array,
) => Pick<StepKernel, 'attempt' | 'complete'>;

/** Instances by work arrays and system shape: models of the same shape share one compiled (and warmed-up) kernel. */
const instances = new WeakMap<Work, Map<string, CompiledInstance>>();
const MAX_INSTANCES = 64;

/** Local names: y0 → a_i, y1 → b_i, stage r's slope → k{r}_i, its argument → x{r}_i. */
const A = (i: number) => `a${i}`;
const B = (i: number) => `b${i}`;
const K = (r: number) => (i: number) => `k${r}_${i}`;
const X = (r: number) => (i: number) => `x${r}_${i}`;

/**
 * Statements for `out_i = base_i + Σ_q (h·vals[q])·k_{cols[q]},i` (base null: 0 + …), the
 * weights h·vals[q] computed once: the order of combine() in rk-step.ts.
 */
function combination(row: SparseRow, tag: string, n: number, base: ((i: number) => string) | null, out: (i: number) => string): string {
  const lines: string[] = [];
  const weights: string[] = [];
  for (let q = 0; q < row.cols.length; q++) {
    const name = `w${tag}_${q}`;
    lines.push(`const ${name} = h * ${lit(row.vals[q])};`);
    weights.push(name);
  }
  for (let i = 0; i < n; i++) {
    let expr = base ? base(i) : '0';
    for (let q = 0; q < row.cols.length; q++) expr += ` + ${weights[q]} * ${K(row.cols[q])(i)}`;
    lines.push(`const ${out(i)} = ${expr};`);
  }
  return lines.join('\n');
}

/** The stages, in order, whose slopes a set of rows reads. */
function readStages(rows: readonly SparseRow[]): number[] {
  const used = new Set<number>();
  for (const row of rows) for (const c of row.cols) used.add(c);
  return [...used].sort((x, y) => x - y);
}

function attemptSource(code: DerivativeCode, u: UnpackedTableau, n: number): string {
  const tab = u.tab;
  const s = tab.stages;
  const stiffStage = tab.stiffness ? tab.stiffness.stage : -1;
  const out: string[] = ['attempt(t, h, rtol, atol) {'];
  for (let i = 0; i < n; i++) out.push(`const ${A(i)} = y0[${i}];`);
  for (let i = 0; i < n; i++) out.push(`const ${K(0)(i)} = k[${i}];`);
  for (let r = 1; r < s; r++) {
    out.push(combination(u.rows[r], `s${r}`, n, A, X(r)));
    out.push(code.emit(X(r), K(r)));
    if (r === stiffStage) for (let i = 0; i < n; i++) out.push(`yStiff[${i}] = ${X(r)(i)};`);
    for (let i = 0; i < n; i++) out.push(`k[${idx(r * n + i)}] = ${K(r)(i)};`);
  }
  if (tab.fsal) for (let i = 0; i < n; i++) out.push(`const ${B(i)} = ${X(s - 1)(i)};`);
  else out.push(combination(u.b, 'b', n, A, B));
  for (let i = 0; i < n; i++) {
    out.push(`y1[${i}] = ${B(i)};`);
    out.push(`const s${i} = atol + rtol * Math.max(Math.abs(${A(i)}), Math.abs(${B(i)}));`);
    out.push(`scale[${i}] = s${i};`);
  }
  if (!u.e) {
    out.push('return 0;', '},');
    return out.join('\n');
  }
  out.push(combination(u.e, 'e', n, null, (i) => `e${i}`));
  out.push('let sum5 = 0;');
  for (let i = 0; i < n; i++) out.push(`sum5 += (e${i} / s${i}) ** 2;`);
  if (!u.e3) {
    out.push(`return Math.sqrt(sum5 / ${n});`, '},');
    return out.join('\n');
  }
  out.push(combination(u.e3, 'g', n, null, (i) => `g${i}`));
  out.push('let sum3 = 0;');
  for (let i = 0; i < n; i++) out.push(`sum3 += (g${i} / s${i}) ** 2;`);
  out.push('const deno = sum5 + 0.01 * sum3;', `return deno > 0 ? sum5 / Math.sqrt(${n} * deno) : 0;`, '},');
  return out.join('\n');
}

/** The alternating nested form of tableau.ts at θ = ½, value and dp/dθ, unrolled. */
function midpointOfForm(vectors: number, n: number): string {
  const out: string[] = ['const theta = 0.5;', 'const theta1 = 1 - theta;'];
  for (let i = 0; i < n; i++) {
    out.push(`let acc${i} = c${vectors - 1}_${i};`, `let dacc${i} = 0;`);
    for (let v = vectors - 2; v >= 0; v--) {
      const even = (v & 1) === 0;
      const phi = even ? 'theta' : 'theta1';
      out.push(`dacc${i} = ${even ? '' : '-'}acc${i} + ${phi} * dacc${i};`);
      out.push(`acc${i} = c${v}_${i} + ${phi} * acc${i};`);
    }
  }
  return out.join('\n');
}

function completeSource(code: DerivativeCode, u: UnpackedTableau, n: number): string {
  const tab = u.tab;
  const out: string[] = ['complete(t, h, out, at) {'];
  for (let i = 0; i < n; i++) out.push(`const ${A(i)} = y0[${i}];`, `const ${B(i)} = y1[${i}];`);
  const extraRows = u.rows.slice(u.end + 1);
  const loaded = new Set(readStages([...extraRows, ...u.d]).filter((j) => j < u.end || (j === u.end && tab.fsal)));
  loaded.add(0);
  if (tab.fsal) loaded.add(u.end);
  for (const j of loaded) for (let i = 0; i < n; i++) out.push(`const ${K(j)(i)} = k[${idx(j * n + i)}];`);
  if (!tab.fsal) {
    out.push(code.emit(B, K(u.end)));
    for (let i = 0; i < n; i++) out.push(`k[${idx(u.end * n + i)}] = ${K(u.end)(i)};`);
  }
  for (let r = u.end + 1; r < u.total; r++) {
    out.push(combination(u.rows[r], `s${r}`, n, A, X(r)));
    out.push(code.emit(X(r), K(r)));
  }
  // Hermite part (dense-store.ts hermiteCoefficients: the first tab.hermiteVectors of the four), then the method's own vectors.
  const f1 = K(u.end);
  const hv = tab.hermiteVectors;
  for (let i = 0; i < n; i++) {
    out.push(`const c0_${i} = ${A(i)};`);
    out.push(`const c1_${i} = ${B(i)} - ${A(i)};`);
    if (hv >= 3) out.push(`const c2_${i} = h * ${K(0)(i)} - c1_${i};`);
    if (hv >= 4) out.push(`const c3_${i} = c1_${i} - h * ${f1(i)} - c2_${i};`);
  }
  u.d.forEach((row, v) => out.push(combination(row, `d${v}`, n, null, (i) => `c${4 + v}_${i}`)));
  const vectors = u.form.vectors;
  for (let v = 0; v < vectors; v++) for (let i = 0; i < n; i++) out.push(`out[at + ${idx(v * n + i)}] = c${v}_${i};`);
  const check = u.denseCheck;
  if (!check) {
    out.push('return 0;', '},');
    return out.join('\n');
  }
  out.push(midpointOfForm(check.form.vectors, n));
  out.push(code.emit((i) => `acc${i}`, (i) => `m${i}`));
  out.push('let sum = 0;');
  for (let i = 0; i < n; i++) out.push(`sum += ((${lit(check.weight)} * (dacc${i} - h * m${i})) / scale[${i}]) ** 2;`);
  out.push(`return Math.sqrt(sum / ${n});`, '},');
  return out.join('\n');
}

/** The body of a function returning both phases. */
export function kernelSource(code: DerivativeCode, u: UnpackedTableau, n: number): string {
  return ['"use strict";', 'return {', attemptSource(code, u, n), completeSource(code, u, n), '};'].join('\n');
}

function instanceFor(tableau: UnpackedTableau, code: DerivativeCode, w: Work): CompiledInstance | null {
  // Work arrays are per (tableau, n), so the system's shape completes the key; the source is
  // built only when a shape is new.
  const key = code.shape;
  let bySource = instances.get(w);
  const cached = bySource?.get(key);
  if (cached) return cached;
  const factory = compileSource<InstanceFactory>(['p', 'u', 'y0', 'k', 'y1', 'yStiff', 'scale'], kernelSource(code, tableau, w.n));
  if (!factory) return null;
  const p = new Float64Array(code.params.length);
  const u = new Float64Array(code.input.length);
  const phases = factory(p, u, w.y0, w.k, w.y1, w.yStiff, w.scale);
  const instance = { p, u, attempt: phases.attempt, complete: phases.complete };
  if (!bySource) {
    bySource = new Map();
    instances.set(w, bySource);
  }
  if (bySource.size >= MAX_INSTANCES) bySource.clear();
  bySource.set(key, instance);
  return instance;
}

/**
 * The compiled kernel for a system with DerivativeCode, or null where the interpreter must
 * do. `w` must be the shared work arrays of (tableau, n): the kernel is bound to them.
 */
export function compiledKernel(code: DerivativeCode, u: UnpackedTableau, w: Work): StepKernel | null {
  if (!codeGenerationEnabled() || w.n > MAX_COMPILED_DIMENSION || code.input.length !== w.n) return null;
  const instance = instanceFor(u, code, w);
  if (!instance) return null;
  return {
    load() {
      instance.p.set(code.params);
      instance.u.set(code.input);
    },
    attempt: instance.attempt,
    complete: instance.complete,
  };
}
