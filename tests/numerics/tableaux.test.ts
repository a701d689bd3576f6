/**
 * Order conditions of every tableau, checked from the tree theory of Butcher
 * (Hairer–Nørsett–Wanner I, §II.2, Theorem 2.13): Σ b_j Φ_j(t) = 1/γ(t) for every rooted
 * tree t with |t| ≤ p. Trees are generated, not listed by hand.
 */
import { describe, expect, it } from 'vitest';
import { DOP853, DOPRI5, EULER, EXPLICIT_TABLEAUX, HEUN, RK4 } from '../../models/solving/numerics/tableaux';
import { endSlopeIndex, fullStageCount } from '../../models/solving/numerics/tableau';
import type { ExplicitTableau } from '../../models/solving/numerics/tableau';
import { RODAS4 } from '../../models/solving/numerics/rosenbrock';

/** A rooted tree as the multiset of its subtrees (canonically ordered). */
interface Tree {
  readonly children: readonly Tree[];
  readonly order: number;
  readonly gamma: number;
}

function makeTree(children: readonly Tree[]): Tree {
  const order = 1 + children.reduce((s, c) => s + c.order, 0);
  const gamma = order * children.reduce((p, c) => p * c.gamma, 1);
  return { children, order, gamma };
}

/** All rooted trees with at most maxOrder vertices (1, 1, 2, 4, 9, 20, 48, 115 by order). */
function treesUpTo(maxOrder: number): Tree[][] {
  const byOrder: Tree[][] = [[], [makeTree([])]];
  const all: Tree[] = [byOrder[1][0]];
  for (let n = 2; n <= maxOrder; n++) {
    const found: Tree[] = [];
    // Multisets of earlier trees (nondecreasing index in `all`) with total order n − 1.
    const extend = (start: number, remaining: number, chosen: Tree[]): void => {
      if (remaining === 0) {
        found.push(makeTree([...chosen]));
        return;
      }
      for (let i = start; i < all.length; i++) {
        if (all[i].order > remaining) continue;
        chosen.push(all[i]);
        extend(i, remaining - all[i].order, chosen);
        chosen.pop();
      }
    };
    extend(0, n - 1, []);
    byOrder.push(found);
    all.push(...found);
  }
  return byOrder;
}

const TREES = treesUpTo(8);

/** Full square coefficient matrix over the tableau's full stage list (main, end slope, extra). */
function fullMatrix(tab: ExplicitTableau): number[][] {
  const total = fullStageCount(tab);
  const rows: (readonly number[])[] = [...tab.a];
  if (!tab.fsal) rows.push(tab.b);
  if (tab.dense) rows.push(...tab.dense.extraA);
  return rows.map((r) => Array.from({ length: total }, (_, j) => r[j] ?? 0));
}

function fullNodes(tab: ExplicitTableau): number[] {
  const c = [...tab.c];
  if (!tab.fsal) c.push(1);
  if (tab.dense) c.push(...tab.dense.extraC);
  return c;
}

/** Φ(t) per stage: product over subtrees of A·Φ(subtree); all ones for the single vertex. */
function elementaryWeights(tree: Tree, a: number[][]): number[] {
  const s = a.length;
  const phi = new Array<number>(s).fill(1);
  for (const child of tree.children) {
    const pc = elementaryWeights(child, a);
    for (let i = 0; i < s; i++) {
      let sum = 0;
      for (let j = 0; j < s; j++) sum += a[i][j] * pc[j];
      phi[i] *= sum;
    }
  }
  return phi;
}

function dot(w: readonly number[], v: readonly number[]): number {
  let s = 0;
  for (let i = 0; i < v.length; i++) s += (w[i] ?? 0) * v[i];
  return s;
}

/** Largest |Σ w_j Φ_j(t) − 1/γ(t)| over trees of exactly the given order. */
function defect(w: readonly number[], a: number[][], order: number): number {
  return Math.max(...TREES[order].map((t) => Math.abs(dot(w, elementaryWeights(t, a)) - 1 / t.gamma)));
}

const bHat = (tab: ExplicitTableau, e: readonly number[]): number[] => tab.b.map((bj, j) => bj - (e[j] ?? 0));

describe('rooted trees', () => {
  it('counts trees per order as in Hairer–Nørsett–Wanner I, Table II.2.1', () => {
    expect(TREES.slice(1).map((t) => t.length)).toEqual([1, 1, 2, 4, 9, 20, 48, 115]);
  });
});

describe.each(EXPLICIT_TABLEAUX.map((t) => [t.name, t] as const))('%s tableau', (_name, tab) => {
  const a = fullMatrix(tab);

  it('has consistent shapes and row sums equal to the nodes (c_i = Σ_j a_ij)', () => {
    expect(tab.c.length).toBe(tab.stages);
    expect(tab.a.length).toBe(tab.stages);
    tab.a.forEach((row, i) => expect(row.length).toBe(i));
    expect(tab.b.length).toBe(tab.stages);
    const c = fullNodes(tab);
    // Rounding of 30-digit published coefficients to doubles: a few ulps times the row's size.
    a.forEach((row, i) => expect(Math.abs(row.reduce((s, v) => s + v, 0) - c[i])).toBeLessThan(1e-13));
  });

  it(`satisfies every order condition up to its order and fails one of the next order`, () => {
    // Sums of products of O(10)–O(100) coefficients in double precision: 1e-12 is ~1e4 ulps.
    for (let p = 1; p <= tab.order; p++) expect(defect(tab.b, a, p)).toBeLessThan(1e-12);
    if (tab.order < 8) expect(defect(tab.b, a, tab.order + 1)).toBeGreaterThan(1e-6);
  });

  if (tab.fsal) {
    it('is FSAL: last row equals b and its node is 1', () => {
      const last = tab.a[tab.stages - 1];
      last.forEach((v, j) => expect(v).toBe(tab.b[j]));
      expect(tab.b[tab.stages - 1]).toBe(0);
      expect(tab.c[tab.stages - 1]).toBe(1);
    });
  }

  if (tab.e && tab.embeddedOrder !== null) {
    const embedded = tab.embeddedOrder;
    const e = tab.e;
    it(`has an embedded solution b − e of order exactly ${embedded}`, () => {
      const w = bHat(tab, e);
      for (let p = 1; p <= embedded; p++) expect(defect(w, a, p)).toBeLessThan(1e-12);
      expect(defect(w, a, embedded + 1)).toBeGreaterThan(1e-6);
    });
  }

  if (tab.e3) {
    const e3 = tab.e3;
    it('has a third-order companion b − e3 (dop853.f: BHH1, BHH2, BHH3)', () => {
      const w = bHat(tab, e3);
      for (let p = 1; p <= 3; p++) expect(defect(w, a, p)).toBeLessThan(1e-12);
      expect(defect(w, a, 4)).toBeGreaterThan(1e-6);
    });
  }

  if (tab.dense) {
    const vectors = 4 + tab.dense.d.length;
    const denseOrder = tab === DOPRI5 ? 4 : 7; // Hairer–Nørsett–Wanner I, §II.6 (DOPRI5: 4, DOP853: 7)
    it(`has a continuous extension of order ${denseOrder}: Σ b_j(θ) Φ_j(t) = θ^|t|/γ(t)`, () => {
      const total = fullStageCount(tab);
      const end = endSlopeIndex(tab);
      const d = tab.dense?.d ?? [];
      for (const theta of [0.2, 0.5, 0.9]) {
        const t1 = 1 - theta;
        // Polynomial multiplying vector v of the nested form y0 + θ(v1 + θ'(v2 + θ(v3 + …))).
        const poly: number[] = [1];
        for (let v = 1; v < vectors; v++) poly.push(poly[v - 1] * (v % 2 === 1 ? theta : t1));
        const w = new Array<number>(total).fill(0);
        for (let j = 0; j < total; j++) {
          const bj = tab.b[j] ?? 0;
          const e1 = j === 0 ? 1 : 0;
          const ef = j === end ? 1 : 0;
          // v1 = hΣb k, v2 = h k1 − v1, v3 = 2 v1 − h k1 − h f1, v(4+r) = hΣ d_r k.
          w[j] = poly[1] * bj + poly[2] * (e1 - bj) + poly[3] * (2 * bj - e1 - ef);
          for (let r = 0; r < d.length; r++) w[j] += poly[4 + r] * (d[r][j] ?? 0);
        }
        for (let p = 1; p <= denseOrder; p++) {
          const worst = Math.max(...TREES[p].map((t) => Math.abs(dot(w, elementaryWeights(t, a)) - theta ** p / t.gamma)));
          expect(worst).toBeLessThan(1e-11);
        }
      }
    });
  }
});

describe('fixed-step tableaux', () => {
  it('are the textbook methods (Hairer–Nørsett–Wanner I, §II.1)', () => {
    expect([EULER.order, HEUN.order, RK4.order]).toEqual([1, 2, 4]);
    expect(EULER.e).toBeNull();
    expect(DOP853.stages).toBe(12);
    expect(fullStageCount(DOP853)).toBe(16); // dop853.f: 12 stages, f(x+h), 3 dense stages
  });
});

/**
 * Rosenbrock conditions in the untransformed coefficients α, Γ (Hairer–Wanner II, §IV.7,
 * Table 7.1), recovered from the transformed data: Γ⁻¹ = diag(1/γ) − C, α = AΓ, bᵀ = mᵀΓ.
 */
describe('RODAS4 (Hairer–Wanner II, §VI.4)', () => {
  const s = RODAS4.stages;
  const g = RODAS4.gamma;
  const zeros = (): number[][] => Array.from({ length: s }, () => new Array<number>(s).fill(0));
  const A = zeros();
  const Ginv = zeros();
  for (let i = 0; i < s; i++) {
    Ginv[i][i] = 1 / g;
    for (let j = 0; j < i; j++) {
      A[i][j] = RODAS4.a[i][j];
      Ginv[i][j] = -RODAS4.c[i][j];
    }
  }
  // Γ = (Γ⁻¹)⁻¹ by forward substitution (lower triangular).
  const G = zeros();
  for (let col = 0; col < s; col++) {
    for (let i = 0; i < s; i++) {
      let sum = i === col ? 1 : 0;
      for (let k = 0; k < i; k++) sum -= Ginv[i][k] * G[k][col];
      G[i][col] = sum / Ginv[i][i];
    }
  }
  const alpha = zeros();
  for (let i = 0; i < s; i++) for (let j = 0; j < s; j++) for (let k = 0; k < s; k++) alpha[i][j] += A[i][k] * G[k][j];
  const weights = (m: readonly number[]): number[] =>
    Array.from({ length: s }, (_, j) => m.reduce((acc, mi, i) => acc + mi * G[i][j], 0));
  const beta = alpha.map((row, i) => row.map((v, j) => (j < i ? v + G[i][j] : 0)));
  const ai = alpha.map((row) => row.reduce((x, y) => x + y, 0));
  const bi = beta.map((row) => row.reduce((x, y) => x + y, 0));
  const mat = (M: number[][], v: number[]): number[] => M.map((row) => dot(row, v));

  const conditions = (b: number[]): number[] => [
    dot(b, new Array<number>(s).fill(1)) - 1,
    dot(b, bi) - (0.5 - g),
    dot(b, ai.map((x) => x * x)) - 1 / 3,
    dot(b, mat(beta, bi)) - (1 / 6 - g + g * g),
    dot(b, ai.map((x) => x ** 3)) - 1 / 4,
    dot(b, ai.map((x, i) => x * mat(alpha, bi)[i])) - (1 / 8 - g / 3),
    dot(b, mat(beta, ai.map((x) => x * x))) - (1 / 12 - g / 3),
    dot(b, mat(beta, mat(beta, bi))) - (1 / 24 - g / 2 + 1.5 * g * g - g ** 3),
  ];

  it('has nodes α_i = Σ_j α_ij and γ_i = Σ_j γ_ij matching the stored data', () => {
    // The published coefficients carry 16 significant digits.
    ai.forEach((v, i) => expect(Math.abs(v - RODAS4.alpha[i])).toBeLessThan(1e-12));
    G.forEach((row, i) => expect(Math.abs(row.reduce((x, y) => x + y, 0) - RODAS4.gammaSum[i])).toBeLessThan(1e-12));
  });

  it('satisfies the eight conditions of order 4, and its embedded solution those of order 3', () => {
    const b = weights(RODAS4.m);
    conditions(b).forEach((r) => expect(Math.abs(r)).toBeLessThan(1e-12));
    const bh = weights(RODAS4.m.map((m, j) => m - RODAS4.e[j]));
    conditions(bh).slice(0, 4).forEach((r) => expect(Math.abs(r)).toBeLessThan(1e-12));
    expect(Math.max(...conditions(bh).slice(4).map(Math.abs))).toBeGreaterThan(1e-6);
  });
});
