/**
 * The exact path for linear models: between breakpoints x' = Mx + u with constant u,
 * so x(t0 + h) = e^{Mh}·x(t0) + ∫₀ʰ e^{Ms} ds·u — no truncation error, only rounding.
 */
import type { Schedule } from '../building/events.ts';
import { normInf } from './linalg/dense.ts';
import { createExpActionWork, expAction, sparseRows, type ExpActionWork, type SparseRows } from './linalg/exp-action.ts';
import { propagator, sharedExpmWorkspace, sharedPropagatorScratch, type ExpmWorkspace, type Propagator } from './linalg/expm.ts';
import type { Trajectory } from './numerics/dense-store.ts';
import { codeGenerationEnabled, compileSource, index } from './numerics/generated-code.ts';
import type { CompartmentSystem } from '../building/system.ts';

/**
 * A propagator with Φ stored by its nonzero entries: compartment models leave many exact
 * zeros in Φ (nothing flows back into a gut depot, and AUC and eliminated amounts never
 * feed back), and marching the output grid is one product with Φ per row.
 */
export interface SparsePropagator {
  readonly rowStart: Int32Array;
  readonly cols: Int32Array;
  readonly vals: Float64Array;
  readonly g: Float64Array;
  /** The product Φ·x + g as straight-line code for this sparsity pattern, or null (then a loop). */
  readonly product: Product | null;
  /**
   * The leading rows that read no quadrature state (the compartments' amounts: nothing
   * depends on an AUC or the amount eliminated), and their product alone — what a grid of
   * concentrations needs, the same arithmetic as those rows of `product`.
   */
  readonly leadingRows: number;
  readonly leadingProduct: Product | null;
}

type Product = (vals: Float64Array, g: Float64Array, x: Float64Array, out: Float64Array) => void;

/** Products by sparsity pattern: every model of one shape, and every step size, shares them. */
interface KnownProduct {
  n: number;
  rowStart: Int32Array;
  cols: Int32Array;
  product: Product | null;
}
const products = new Map<number, KnownProduct[]>();
let productCount = 0;
const MAX_PRODUCTS = 256;

/** A hash of the pattern (FNV-1a over its integers): a population asks for the same few patterns for every subject. */
function patternHash(rowStart: Int32Array, cols: Int32Array, n: number): number {
  let h = 0x811c9dc5 ^ n;
  for (let i = 0; i < rowStart.length; i++) h = Math.imul(h ^ rowStart[i], 0x01000193);
  for (let i = 0; i < cols.length; i++) h = Math.imul(h ^ cols[i], 0x01000193);
  return h >>> 0;
}

function samePattern(k: KnownProduct, rowStart: Int32Array, cols: Int32Array, n: number): boolean {
  if (k.n !== n || k.rowStart.length !== rowStart.length || k.cols.length !== cols.length) return false;
  for (let i = 0; i < rowStart.length; i++) if (k.rowStart[i] !== rowStart[i]) return false;
  for (let i = 0; i < cols.length; i++) if (k.cols[i] !== cols[i]) return false;
  return true;
}

/**
 * out_i = g_i + Σ vals[e]·x[cols[e]], written out entry by entry in the loop's order (so
 * the bits are the loop's); null where code generation is off or refused.
 */
function productFor(rowStart: Int32Array, cols: Int32Array, n: number): Product | null {
  if (!codeGenerationEnabled() || cols.length > 4096) return null;
  const hash = patternHash(rowStart, cols, n);
  const known = products.get(hash)?.find((k) => samePattern(k, rowStart, cols, n));
  if (known) return known.product;
  const lines: string[] = ['"use strict";'];
  for (let j = 0; j < n; j++) lines.push(`const x${j} = x[${index(j)}];`);
  for (let i = 0; i < n; i++) {
    let expr = `g[${index(i)}]`;
    for (let e = rowStart[i]; e < rowStart[i + 1]; e++) expr += ` + vals[${index(e)}] * x${index(cols[e])}`;
    lines.push(`out[${index(i)}] = ${expr};`);
  }
  const product = compileSource<Product>(['vals', 'g', 'x', 'out'], lines.join('\n'));
  if (productCount >= MAX_PRODUCTS) {
    products.clear();
    productCount = 0;
  }
  const list = products.get(hash) ?? [];
  list.push({ n, rowStart: rowStart.slice(), cols: cols.slice(), product });
  products.set(hash, list);
  productCount++;
  return product;
}

/**
 * A run of rows of a regular grid within one piece, amounts only: `count` times
 * x ← Φ_lead·x + g_lead, each new state's picked amounts divided by their volumes into
 * out[bases[b] + row0 + r] — the arithmetic of applyLeading row by row (the same bits), with
 * the state in local variables rather than loaded and stored at every row.
 */
type LeadingRun = (vals: Float64Array, g: Float64Array, x: Float64Array, count: number, out: Float32Array, bases: Int32Array, volumes: Float64Array, row0: number) => void;

const leadingRuns = new Map<string, LeadingRun | null>();

/** The leading run for p's pattern and these picks (code generated once per pattern), or null. */
function leadingRunFor(p: SparsePropagator, picks: Int32Array): LeadingRun | null {
  const L = p.leadingRows;
  const end = p.rowStart[L];
  const key = `${L}|${Array.from(p.rowStart.subarray(0, L + 1)).join(',')}|${Array.from(p.cols.subarray(0, end)).join(',')}|${Array.from(picks).join(',')}`;
  if (leadingRuns.has(key)) return leadingRuns.get(key) ?? null;
  if (leadingRuns.size >= MAX_PRODUCTS) leadingRuns.clear();
  let run: LeadingRun | null = null;
  if (codeGenerationEnabled() && end <= 4096) {
    const lines: string[] = ['"use strict";'];
    for (let j = 0; j < L; j++) lines.push(`let x${j} = x[${index(j)}];`, `const g${j} = g[${index(j)}];`);
    for (let e = 0; e < end; e++) lines.push(`const v${e} = vals[${index(e)}];`);
    picks.forEach((_, b) => lines.push(`const w${b} = volumes[${index(b)}];`, `const o${b} = bases[${index(b)}] + row0;`));
    lines.push('for (let r = 0; r < count; r++) {');
    for (let i = 0; i < L; i++) {
      let expr = `g${i}`;
      for (let e = p.rowStart[i]; e < p.rowStart[i + 1]; e++) expr += ` + v${e} * x${index(p.cols[e])}`;
      lines.push(`const y${i} = ${expr};`);
    }
    for (let i = 0; i < L; i++) lines.push(`x${i} = y${i};`);
    picks.forEach((c, b) => lines.push(`out[o${b} + r] = x${index(c)} / w${b};`));
    lines.push('}');
    for (let j = 0; j < L; j++) lines.push(`x[${index(j)}] = x${j};`);
    run = compileSource<LeadingRun>(['vals', 'g', 'x', 'count', 'out', 'bases', 'volumes', 'row0'], lines.join('\n'));
  }
  leadingRuns.set(key, run);
  return run;
}

function sparsePropagator(p: Propagator, n: number, leadingRows: number): SparsePropagator {
  const cols: number[] = [];
  const vals: number[] = [];
  const rowStart = new Int32Array(n + 1);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) {
      const v = p.phi[i * n + j];
      if (v !== 0) {
        cols.push(j);
        vals.push(v);
      }
    }
    rowStart[i + 1] = cols.length;
  }
  const colIndex = Int32Array.from(cols);
  const leading = rowStart.subarray(0, leadingRows + 1);
  return {
    rowStart,
    cols: colIndex,
    vals: Float64Array.from(vals),
    g: p.g.slice(),
    product: productFor(rowStart, colIndex, n),
    leadingRows,
    leadingProduct: leadingRows < n ? productFor(leading, colIndex.subarray(0, leading[leadingRows]), leadingRows) : null,
  };
}

/**
 * Diagonal scaling D (powers of two) for the quadrature states — states nothing depends on
 * (zero column), the AUCs and the amount eliminated: d_j ≈ the largest entry of row j. Their
 * rows hold 1/V, up to 1e9 for an effect compartment of negligible volume; unscaled, such a
 * row dominates every norm, and the exponential's rounding on that scale swamps the small
 * amounts. D⁻¹MD has entries of order one there; e^{Mh} = D·e^{D⁻¹MDh}·D⁻¹ exactly.
 */
export function quadratureScaling(m: Float64Array, n: number): Float64Array {
  const d = new Float64Array(n).fill(1);
  for (let j = 0; j < n; j++) {
    let column = false;
    for (let i = 0; i < n; i++) if (i !== j && m[i * n + j] !== 0) column = true;
    if (column || m[j * n + j] !== 0) continue;
    let row = 0;
    for (let k = 0; k < n; k++) row = Math.max(row, Math.abs(m[j * n + k]));
    if (row > 0) d[j] = 2 ** Math.round(Math.log2(row));
  }
  return d;
}

/** Propagators keyed by (step, input vector); regular grids reuse a handful of them. */
export class PropagatorCache {
  private readonly cache: Map<StepKey, SparsePropagator>;
  private readonly ws: ExpmWorkspace;
  computed = 0;
  /** quadratureScaling of the matrix, the scaled matrix D⁻¹MD and the scaled inputs D⁻¹u. */
  readonly scaling: Float64Array;
  readonly scaledMatrix: Float64Array;
  readonly scaledInputs: readonly Float64Array[];
  /** States nothing depends on (a zero column of the matrix). */
  private readonly quadrature: boolean[];
  private readonly scratch: Propagator;

  constructor(
    readonly matrix: Float64Array,
    private readonly n: number,
    /** Input vector (length n) of each rate key. */
    readonly inputs: readonly Float64Array[],
    private readonly capacity = 4096,
    /**
     * A cache of the same matrix whose propagators this one may share: a steady-state cycle of
     * the run just made (the same subject's matrix, and inputs equal key by key) then reuses the
     * run's Padé exponentials — the dosing interval's, the long knot steps' — rather than making
     * them again. Steps asked for once are still remembered per cache (getIfRepeated).
     */
    shareWith?: PropagatorCache,
  ) {
    this.ws = sharedExpmWorkspace(n + 1);
    if (shareWith && shareWith.matrix === matrix && shareWith.n === n && sameInputs(shareWith.inputs, inputs)) {
      this.cache = shareWith.cache;
      this.scaling = shareWith.scaling;
      this.scaledMatrix = shareWith.scaledMatrix;
      this.scaledInputs = shareWith.scaledInputs;
      this.scratch = shareWith.scratch;
      this.quadrature = shareWith.quadrature;
      this.fastestRate = shareWith.fastestRate;
      this.leadingRows = shareWith.leadingRows;
      return;
    }
    this.cache = new Map<StepKey, SparsePropagator>();
    const d = quadratureScaling(matrix, n);
    this.scaling = d;
    this.scaledMatrix = Float64Array.from(matrix, (v, k) => (v * d[k % n]) / d[Math.floor(k / n)]);
    this.scaledInputs = inputs.map((u) => (u ? Float64Array.from(u, (v, i) => v / d[i]) : u));
    this.scratch = sharedPropagatorScratch(n);
    this.quadrature = Array.from({ length: n }, (_, j) => {
      for (let i = 0; i < n; i++) if (matrix[i * n + j] !== 0) return false;
      return true;
    });
    let fastest = 0;
    for (let i = 0; i < n; i++) fastest = Math.max(fastest, -matrix[i * n + i]);
    this.fastestRate = fastest;
    const firstQuadrature = this.quadrature.indexOf(true);
    this.leadingRows = firstQuadrature < 0 ? n : firstQuadrature;
  }

  /** Rows before the first quadrature state: each reads only states before it (see SparsePropagator). */
  readonly leadingRows: number;

  /** Largest −M_ii: an upper bound of the decay rate of the fastest mode in compartment models. */
  readonly fastestRate: number;
  private lastH = NaN;
  private lastKey = -1;
  private last: SparsePropagator | null = null;

  get(h: number, rateKey: number): SparsePropagator {
    // Steps that differ only in the last bits (t − t0 on a grid) share one propagator; the
    // relative change of 1e-12 in h is far below any tolerance a user can ask for.
    if (rateKey === this.lastKey && Math.abs(h - this.lastH) <= 1e-12 * h && this.last) return this.last;
    const key = stepKey(h, rateKey);
    const hit = this.cache.get(key) ?? this.compute(key, h, rateKey);
    this.lastH = h;
    this.lastKey = rateKey;
    this.last = hit;
    return hit;
  }

  /** Steps asked for once and not kept: the second request of a step makes its propagator. */
  private readonly seenOnce = new Set<StepKey>();

  /**
   * The cached propagator of step h, or null when this step has not been asked for before: a
   * step used once (the growing knot steps of one dosing interval, say) is cheaper by the
   * action of the exponential than by a Padé exponential of its own. The step is remembered,
   * so a step that repeats gets its propagator the second time.
   */
  getIfRepeated(h: number, rateKey: number): SparsePropagator | null {
    if (rateKey === this.lastKey && Math.abs(h - this.lastH) <= 1e-12 * h && this.last) return this.last;
    const key = stepKey(h, rateKey);
    const hit = this.cache.get(key);
    if (hit) return hit;
    if (!this.seenOnce.has(key)) {
      if (this.seenOnce.size >= this.capacity) this.seenOnce.clear();
      this.seenOnce.add(key);
      return null;
    }
    return this.get(h, rateKey);
  }

  private compute(key: StepKey, h: number, rateKey: number): SparsePropagator {
    if (this.cache.size >= this.capacity) this.cache.clear();
    const p = this.uncached(h, rateKey);
    this.cache.set(key, p);
    return p;
  }

  /**
   * The propagator for exactly h, not shared with nearly equal steps: computed for the scaled
   * matrix, its quadrature columns set to what they are exactly (nothing depends on those
   * states: the unit vector), then scaled back, Φ = D·Φ'·D⁻¹ and g = D·g'.
   */
  uncached(h: number, rateKey: number): SparsePropagator {
    const n = this.n;
    const d = this.scaling;
    const input = this.scaledInputs[rateKey];
    this.computed++;
    const p = propagator(this.scaledMatrix, n, h, isZero(input) ? null : input, this.ws, this.scratch);
    for (let j = 0; j < n; j++) {
      if (!this.quadrature[j]) continue;
      for (let i = 0; i < n; i++) p.phi[i * n + j] = i === j ? 1 : 0;
    }
    const phi = new Float64Array(n * n);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) phi[i * n + j] = (d[i] * p.phi[i * n + j]) / d[j];
    return sparsePropagator({ phi, g: Float64Array.from(p.g, (v, i) => v * d[i]) }, n, this.leadingRowsOf(phi));
  }

  /** leadingRows, unless a row among them reads a later state in this Φ (then all rows). */
  private leadingRowsOf(phi: Float64Array): number {
    const n = this.n;
    const m = this.leadingRows;
    for (let i = 0; i < m; i++) for (let j = m; j < n; j++) if (phi[i * n + j] !== 0) return n;
    return m;
  }

  /** out ← Φ(h)·x + g(h) with a cached propagator; out must not be x. */
  advance(x: Float64Array, h: number, rateKey: number, out: Float64Array): void {
    if (h === 0) out.set(x);
    else apply(this.get(h, rateKey), x, this.n, out);
  }
}

/** Whether two lists of input vectors are equal key by key (a key's vector may be absent in both). */
function sameInputs(a: readonly Float64Array[], b: readonly Float64Array[]): boolean {
  if (a.length !== b.length) return false;
  for (let k = 0; k < a.length; k++) {
    const u = a[k];
    const v = b[k];
    if (u === v) continue;
    if (!u || !v || u.length !== v.length) return false;
    for (let i = 0; i < u.length; i++) if (u[i] !== v[i]) return false;
  }
  return true;
}

type StepKey = number | string;

/**
 * A number naming (rate key, h to 12 significant digits): steps that differ by less are one
 * step. The digits as an integer (below 10¹²), the decimal exponent and the rate key packed
 * into one double — a number key, where a string built per step cost more than the step.
 */
function stepKey(h: number, rateKey: number): StepKey {
  // Beyond 8 rate keys (many distinct infusion rates) the packed number would pass 2⁵³.
  if (rateKey >= 8 || !(h > 0) || !Number.isFinite(h)) return `${rateKey}:${h.toPrecision(12)}`;
  const e = Math.floor(Math.log10(h));
  const digits = Math.round(h * 10 ** (11 - e));
  // digits ≤ 10¹², e + 512 < 1024, rateKey < 8: at most 8.3e15 < 2⁵³, so every key is exact.
  return (digits * 1024 + (e + 512)) * 8 + rateKey;
}

function isZero(v: Float64Array): boolean {
  for (let i = 0; i < v.length; i++) if (v[i] !== 0) return false;
  return true;
}

/** The first p.leadingRows entries of Φ·x + g (out and x distinct); the rest of out is left as it was. */
function applyLeading(p: SparsePropagator, x: Float64Array, out: Float64Array): void {
  if (p.leadingProduct) {
    p.leadingProduct(p.vals, p.g, x, out);
    return;
  }
  const { rowStart, cols, vals, g } = p;
  for (let i = 0; i < p.leadingRows; i++) {
    let s = g[i];
    for (let e = rowStart[i]; e < rowStart[i + 1]; e++) s += vals[e] * x[cols[e]];
    out[i] = s;
  }
}

/** out = Φ·x + g over Φ's nonzero entries (out and x distinct). */
function apply(p: SparsePropagator, x: Float64Array, n: number, out: Float64Array): void {
  if (p.product) {
    p.product(p.vals, p.g, x, out);
    return;
  }
  const { rowStart, cols, vals, g } = p;
  for (let i = 0; i < n; i++) {
    let s = g[i];
    for (let e = rowStart[i]; e < rowStart[i + 1]; e++) s += vals[e] * x[cols[e]];
    out[i] = s;
  }
}

/** Input vectors over the full state (amount entries only) for each rate key of a schedule. */
export function scheduleInputs(schedule: Schedule, stateSize: number): Float64Array[] {
  const inputs: Float64Array[] = [];
  for (const bp of schedule.breakpoints) {
    if (inputs[bp.rateKey]) continue;
    const u = new Float64Array(stateSize);
    u.set(bp.rates);
    inputs[bp.rateKey] = u;
  }
  return inputs;
}

/**
 * Knot times of one piece [a, b): steps of a fifth of the fastest time constant just after
 * the breakpoint (where fast phases turn), growing by a quarter each until a 24th of the piece.
 */
function pieceKnotTimes(a: number, b: number, fastest: number, out: number[], steps?: number[]): void {
  const widest = (b - a) / 24;
  let h = fastest > 0 ? Math.min(widest, 0.2 / fastest) : widest;
  for (let t = a; t < b - 1e-9 * widest; t += h, h = Math.min(1.25 * h, widest)) {
    out.push(t);
    steps?.push(h);
  }
}

/** Knot-step propagators kept (the growing steps repeat; the capped one differs per piece length). */
const EXACT_STEPS_KEPT = 4096;

/** Largest ‖M‖∞·h evaluated by the Taylor action (64 sub-steps); beyond it a Padé propagator is cheaper. */
const TAYLOR_NORM_LIMIT = 32;

/**
 * Largest ‖M‖∞·h for which a step seen for the first time goes by the action rather than a Padé
 * propagator: measured on a three-compartment model, the action cost 1.4–7.5 µs up to 3.4 and
 * 15–97 µs from 6.8 to 30, against 8–18 µs for a Padé propagator whatever the step.
 */
const FIRST_STEP_ACTION_LIMIT = 3;

/** Knot states kept for this many pieces, first in first out (metrics walk the pieces in order). */
const KNOT_PIECES_KEPT = 64;

/** Knot offsets of a piece and the steps between them; the propagators are made when the plan is used again. */
interface KnotPlan {
  offsets: Float64Array;
  nominal: Float64Array;
  steps: SparsePropagator[] | null;
}

/** The exact solution as pieces: each starts at a breakpoint with its state just after the jumps. */
export class LinearTrajectory implements Trajectory {
  readonly dimension: number;
  readonly start: number;
  readonly end: number;
  private readonly actionWork: ExpActionWork;
  /** The scaled matrix's nonzeros, made at the first action (a trajectory only sampled on a regular grid needs none). */
  private actionMatrix: SparseRows | null = null;
  /** Scratch for the state in scaled coordinates D⁻¹x (PropagatorCache.scaling). */
  private readonly scaled: Float64Array;
  private readonly scaledOut: Float64Array;
  private readonly matrixNorm: number;
  private readonly inputs: readonly Float64Array[];
  /** Knot offsets from the piece start (shared plan) and the states there. */
  private readonly knotStates = new Map<number, { offsets: Float64Array; states: Float64Array }>();
  private readonly knotPlans = new Map<string, KnotPlan>();
  private readonly exactSteps = new Map<string, SparsePropagator>();
  /**
   * The states of the last two rows sample() handed out, with their times and pieces: a root
   * between two rows of a scan (a peak, a crossing, sought while the later row is handled) is
   * then reached by a short step from the row before it, not from the piece's knots, which
   * would be marched for that alone.
   */
  private recent: Float64Array;
  private recentTime = NaN;
  private recentPiece = -1;
  private previous: Float64Array;
  private previousTime = NaN;
  private previousPiece = -1;

  constructor(
    private readonly times: Float64Array,
    private readonly states: Float64Array,
    private readonly keys: Int32Array,
    readonly cache: PropagatorCache,
    dimension: number,
    end: number,
  ) {
    this.dimension = dimension;
    this.start = times[0];
    this.end = end;
    this.actionWork = createExpActionWork(dimension);
    this.matrixNorm = normInf(cache.scaledMatrix, dimension);
    this.inputs = cache.scaledInputs;
    this.scaled = new Float64Array(dimension);
    this.scaledOut = new Float64Array(dimension);
    this.recent = new Float64Array(dimension);
    this.previous = new Float64Array(dimension);
  }

  get pieces(): number {
    return this.times.length;
  }

  pieceStart(k: number): number {
    return this.times[k];
  }

  pieceEnd(k: number): number {
    return k + 1 < this.times.length ? this.times[k + 1] : this.end;
  }

  /** State just after the breakpoint that opens piece k. */
  pieceState(k: number, out: Float64Array): void {
    // A copy by index: a subarray per piece would be garbage made for every dose of every subject.
    const n = this.dimension;
    const states = this.states;
    for (let i = 0, at = k * n; i < n; i++) out[i] = states[at + i];
  }

  pieceKey(k: number): number {
    return this.keys[k];
  }

  locate(t: number, side: 'left' | 'right'): number {
    let lo = 0;
    let hi = this.times.length - 1;
    while (lo < hi) {
      const mid = (lo + hi + 1) >>> 1;
      const s = this.times[mid];
      if (side === 'left' ? s < t : s <= t) lo = mid;
      else hi = mid - 1;
    }
    return lo;
  }

  /**
   * From the nearest knot of the piece at or before t (or from one of the last two rows
   * sample() handed out, when t lies shortly after it in the same piece), by the action of the
   * matrix exponential over what remains: a few matrix–vector products where a fresh
   * propagator would cost a Padé exponential at every probe.
   */
  stateAt(t: number, side: 'left' | 'right', out: Float64Array): void {
    const n = this.dimension;
    const k = this.locate(t, side);
    if (t <= this.times[k]) {
      this.pieceState(k, out);
      return;
    }
    // Shortly after one of the last two rows sampled, in the same piece: one short step from there.
    const near = (piece: number, time: number) => piece === k && t >= time && this.matrixNorm * (t - time) <= FIRST_STEP_ACTION_LIMIT;
    const from = near(this.recentPiece, this.recentTime) ? 1 : near(this.previousPiece, this.previousTime) ? 2 : 0;
    if (from > 0) {
      const x = from === 1 ? this.recent : this.previous;
      const h = t - (from === 1 ? this.recentTime : this.previousTime);
      if (h === 0) out.set(x);
      else this.act(x, h, this.inputs[this.keys[k]], out);
      return;
    }
    // Times within the piece are measured from its start (t − a is exact for t near a), so
    // that the knot offsets of the shared plan stay exact as well.
    const since = t - this.times[k];
    const knots = this.knotsOfPiece(k);
    let lo = 0;
    let hi = knots.offsets.length - 1;
    while (lo < hi) {
      const mid = (lo + hi + 1) >>> 1;
      if (knots.offsets[mid] <= since) lo = mid;
      else hi = mid - 1;
    }
    const input = this.inputs[this.keys[k]];
    const x = knots.states.subarray(lo * n, (lo + 1) * n);
    const h = since - knots.offsets[lo];
    // The Taylor action takes ‖M‖·h/½ sub-steps: with a fast rate (a stiff model) that grows
    // without bound, while one Padé propagator costs about the same whatever the step.
    if (this.matrixNorm * h > TAYLOR_NORM_LIMIT) {
      apply(this.cache.uncached(h, this.keys[k]), x, n, out);
      return;
    }
    this.act(x, h, input, out);
  }

  /** out ← the state h after x under input, by the action of the exponential (x and out distinct). */
  private act(x: Float64Array, h: number, input: Float64Array, out: Float64Array): void {
    const n = this.dimension;
    // In the scaled coordinates of the propagators (quadrature states divided by D).
    const d = this.cache.scaling;
    for (let i = 0; i < n; i++) this.scaled[i] = x[i] / d[i];
    this.actionMatrix ??= sparseRows(this.cache.scaledMatrix, n);
    expAction(this.actionMatrix, n, this.matrixNorm, h, this.scaled, input, this.scaledOut, this.actionWork);
    for (let i = 0; i < n; i++) out[i] = this.scaledOut[i] * d[i];
  }

  /**
   * The knot times and states of piece k, marched with the propagators of its knot steps
   * (one plan per piece length and input, shared by all such pieces; states kept for a few pieces).
   */
  private knotsOfPiece(k: number): { offsets: Float64Array; states: Float64Array } {
    const kept = this.knotStates.get(k);
    if (kept) return kept;
    const n = this.dimension;
    const plan = this.knotPlan(this.pieceEnd(k) - this.times[k], this.keys[k]);
    const count = plan.offsets.length;
    let states: Float64Array | undefined;
    if (this.knotStates.size >= KNOT_PIECES_KEPT) {
      const oldest = this.knotStates.keys().next().value as number;
      const reused = this.knotStates.get(oldest);
      this.knotStates.delete(oldest);
      if (reused && reused.states.length === count * n) states = reused.states;
    }
    states ??= new Float64Array(count * n);
    for (let i = 0; i < n; i++) states[i] = this.states[k * n + i];
    const input = this.inputs[this.keys[k]];
    for (let j = 1; j < count; j++) {
      const from = states.subarray((j - 1) * n, j * n);
      const to = states.subarray(j * n, (j + 1) * n);
      const h = plan.nominal[j - 1];
      // A plan used once (one dosing cycle of a virtual subject) is marched by the action of
      // the exponential where that is cheap; a plan that repeats keeps exact propagators.
      if (plan.steps) apply(plan.steps[j - 1], from, n, to);
      else if (this.matrixNorm * h <= FIRST_STEP_ACTION_LIMIT) this.act(from, h, input, to);
      else apply(this.exactStep(h, this.keys[k]), from, n, to);
    }
    const entry = { offsets: plan.offsets, states };
    this.knotStates.set(k, entry);
    return entry;
  }

  /** The propagator of exactly h (not merged with nearly equal steps), kept for reuse. */
  private exactStep(h: number, rateKey: number): SparsePropagator {
    const key = `${rateKey}:${h}`;
    const known = this.exactSteps.get(key);
    if (known) return known;
    const step = this.cache.uncached(h, rateKey);
    if (this.exactSteps.size >= EXACT_STEPS_KEPT) this.exactSteps.clear();
    this.exactSteps.set(key, step);
    return step;
  }

  private knotPlan(length: number, rateKey: number): KnotPlan {
    const key = `${rateKey}:${length.toPrecision(12)}`;
    const known = this.knotPlans.get(key);
    if (known) {
      // steps[j − 1] carries knot j − 1 to knot j by exactly its nominal step (the shared cache
      // would hand out a propagator of a step up to 1e-12 shorter or longer, and knot states are
      // where every evaluation between the grid points starts). The growing steps are the same
      // doubles in every piece, so pieces of other lengths share all but their capped steps.
      known.steps ??= Array.from(known.nominal, (h) => this.exactStep(h, rateKey));
      return known;
    }
    const list: number[] = [];
    const nominal: number[] = [];
    pieceKnotTimes(0, length, this.fastestRate, list, nominal);
    const plan: KnotPlan = { offsets: Float64Array.from(list), nominal: Float64Array.from(nominal), steps: null };
    if (this.knotPlans.size >= KNOT_PIECES_KEPT) this.knotPlans.clear();
    this.knotPlans.set(key, plan);
    return plan;
  }

  /** Times that bracket every turning point and crossing for the metrics (pieceKnotTimes in each piece). */
  knots(from = -Infinity, to = Infinity): Float64Array {
    const out: number[] = [];
    const first = from === -Infinity ? 0 : this.locate(from, 'right');
    const last = to === Infinity ? this.times.length - 1 : this.locate(to, 'right');
    for (let k = first; k <= last; k++) pieceKnotTimes(this.times[k], this.pieceEnd(k), this.fastestRate, out);
    out.push(this.end);
    return Float64Array.from(out);
  }

  /** Largest first-order rate out of any state (−diagonal of the matrix). */
  private get fastestRate(): number {
    return this.cache.fastestRate;
  }

  /**
   * States at ascending times (side per row) by marching from point to point with
   * cached propagators: one matrix–vector product per row on a regular grid.
   */
  sample(times: Float64Array, sides: Uint8Array, write: (row: number, state: Float64Array) => void): void {
    this.march(times, sides, write, null, null, null, 0);
  }

  sampleInto(times: Float64Array, sides: Uint8Array, picks: Int32Array, volumes: Float64Array, out: Float32Array, stride: number): void {
    this.march(times, sides, null, picks, volumes, out, stride);
  }

  /** sample() and sampleInto(): rows to `write`, or concentrations straight into `out`. */
  private march(
    times: Float64Array,
    sides: Uint8Array,
    write: ((row: number, state: Float64Array) => void) | null,
    picks: Int32Array | null,
    volumes: Float64Array | null,
    out: Float32Array | null,
    stride: number,
  ): void {
    const n = this.dimension;
    let x = new Float64Array(n);
    let next = new Float64Array(n);
    const starts = this.times;
    const last = starts.length - 1;
    let piece = -1;
    let k = 0;
    let at = 0;
    // Concentrations only: the amounts' rows suffice (the quadrature states are never read).
    const amountsOnly = write === null && picks !== null;
    const highestPick = picks ? Math.max(-1, ...picks) : -1;
    // The propagator of the last step, kept while steps repeat (a regular grid) in one piece.
    let step: SparsePropagator | null = null;
    let stepH = NaN;
    // Concentrations into `out`: the generated run for the step in use (see leadingRunFor).
    let runStep: SparsePropagator | null = null;
    let run: LeadingRun | null = null;
    const bases = picks ? Int32Array.from(picks, (_, b) => b * stride) : new Int32Array(0);
    for (let row = 0; row < times.length; row++) {
      const t = times[row];
      // Rows ascend, so the piece only moves forward: the last one starting before t (left
      // limit) or at t (right limit), as locate() would find.
      if (sides[row] === 0) while (k < last && starts[k + 1] < t) k++;
      else while (k < last && starts[k + 1] <= t) k++;
      if (k !== piece) {
        if (piece < 0 || this.keys[k] !== this.keys[piece]) step = null;
        piece = k;
        this.pieceState(k, x);
        at = starts[k];
      }
      if (t > at) {
        const h = t - at;
        if (step === null || Math.abs(h - stepH) > 1e-12 * h) {
          // A step seen for the first time goes by the action of the exponential (when that is
          // cheap); a repeated one (a regular grid) by its propagator, one product per row.
          step = this.matrixNorm * h > FIRST_STEP_ACTION_LIMIT ? this.cache.get(h, this.keys[k]) : this.cache.getIfRepeated(h, this.keys[k]);
          stepH = h;
        }
        if (step && amountsOnly && step.leadingRows > highestPick) {
          // The rows that follow at the same step in this piece go in one run — when there are
          // some: times that never repeat a step (a grid out of phase with the doses) take one
          // product each, without looking up a run.
          let count = 1;
          for (let r = row + 1; r < times.length; r++) {
            const tr = times[r];
            const hr = tr - times[r - 1];
            const leaves = k < last && (sides[r] === 0 ? starts[k + 1] < tr : starts[k + 1] <= tr);
            if (leaves || !(hr > 0) || Math.abs(hr - stepH) > 1e-12 * hr) break;
            count++;
          }
          if (count > 1 && step !== runStep) {
            runStep = step;
            run = picks && picks.length > 0 ? leadingRunFor(step, picks) : null;
          }
          if (count > 1 && run && out && volumes) {
            run(step.vals, step.g, x, count, out, bases, volumes, row);
            row += count - 1;
            at = times[row];
            continue;
          }
          applyLeading(step, x, next);
        } else if (step) apply(step, x, n, next);
        else this.act(x, h, this.inputs[this.keys[k]], next);
        const swap = x;
        x = next;
        next = swap;
        at = t;
      }
      if (write) {
        const slot = this.previous;
        this.previous = this.recent;
        this.previousTime = this.recentTime;
        this.previousPiece = this.recentPiece;
        slot.set(x);
        this.recent = slot;
        this.recentTime = t;
        this.recentPiece = k;
        write(row, x);
      } else if (out && picks && volumes) for (let b = 0; b < picks.length; b++) out[b * stride + row] = x[picks[b]] / volumes[b];
    }
  }
}

/** Propagates the schedule exactly from state y (at schedule.start, before its first jumps). */
export function propagateExact(
  system: CompartmentSystem,
  schedule: Schedule,
  y: Float64Array,
  cache?: PropagatorCache,
): { trajectory: LinearTrajectory; final: Float64Array } {
  const n = system.dimension;
  const bps = schedule.breakpoints;
  const props = cache ?? new PropagatorCache(system.linearMatrix, n, scheduleInputs(schedule, n));
  const times = new Float64Array(bps.length);
  const states = new Float64Array(bps.length * n);
  const keys = new Int32Array(bps.length);
  const x = Float64Array.from(y);
  const next = new Float64Array(n);
  for (let k = 0; k < bps.length; k++) {
    const bp = bps[k];
    for (const j of bp.jumps) x[j.compartment] += j.amount;
    times[k] = bp.time;
    keys[k] = bp.rateKey;
    states.set(x, k * n);
    const until = k + 1 < bps.length ? bps[k + 1].time : schedule.end;
    props.advance(x, until - bp.time, bp.rateKey, next);
    x.set(next);
  }
  return { trajectory: new LinearTrajectory(times, states, keys, props, n, schedule.end), final: x };
}
