import { describe, expect, test } from 'vitest';
import fc from 'fast-check';
import { eigs } from 'mathjs';
import { fromRows, matMul } from '../../models/solving/linalg/dense.ts';
import { createEigenWorkspace, createEigenvalues, eigenvalues } from '../../models/solving/linalg/eigenvalues.ts';
import type { Eigenvalues } from '../../models/solving/linalg/eigenvalues.ts';
import { compartmentMatrix, mathjsMatrix, mixedMatrix, norm1Of, U } from './helpers.ts';

interface Cx {
  re: number;
  im: number;
}

/** mathjs eigs values (numbers or Complex) as {re, im}; null when mathjs does not converge. */
function mathjsEigenvalues(a: Float64Array, n: number): Cx[] | null {
  let values: unknown;
  try {
    values = eigs(mathjsMatrix(a, n), { eigenvectors: false }).values;
  } catch {
    return null;
  }
  const list = (Array.isArray(values) ? values : (values as { toArray(): unknown[] }).toArray()) as Array<number | Cx>;
  return list.map((v) => (typeof v === 'number' ? { re: v, im: 0 } : { re: v.re, im: v.im }));
}

/** Largest distance from each of ours to a distinct reference eigenvalue (greedy nearest matching). */
function matchError(ours: Eigenvalues, refs: Cx[]): number {
  const used = new Set<number>();
  let worst = 0;
  for (let i = 0; i < ours.re.length; i++) {
    let best = Infinity;
    let bestJ = -1;
    refs.forEach((z, j) => {
      if (used.has(j)) return;
      const d = Math.hypot(z.re - ours.re[i], z.im - ours.im[i]);
      if (d < best) {
        best = d;
        bestJ = j;
      }
    });
    used.add(bestJ);
    worst = Math.max(worst, best);
  }
  return worst;
}

function minSeparation(refs: Cx[]): number {
  let sep = Infinity;
  for (let i = 0; i < refs.length; i++) {
    for (let j = i + 1; j < refs.length; j++) sep = Math.min(sep, Math.hypot(refs[i].re - refs[j].re, refs[i].im - refs[j].im));
  }
  return sep;
}

function expectSorted(e: Eigenvalues): void {
  for (let i = 1; i < e.re.length; i++) {
    expect(e.re[i - 1] > e.re[i] || (e.re[i - 1] === e.re[i] && e.im[i - 1] >= e.im[i])).toBe(true);
  }
}

function trace(a: Float64Array, n: number): number {
  let t = 0;
  for (let i = 0; i < n; i++) t += a[i * n + i];
  return t;
}

describe('eigenvalues against closed forms', () => {
  test('two-compartment model: α, β = ½[(k12+k21+k10) ± √((k12+k21+k10)² − 4·k21·k10)] (standard hybrid constants, Gibaldi & Perrier, Pharmacokinetics 2nd ed., ch. 2)', () => {
    fc.assert(
      fc.property(
        fc.double({ min: -4, max: 3, noNaN: true }),
        fc.double({ min: -4, max: 3, noNaN: true }),
        fc.double({ min: -4, max: 3, noNaN: true }),
        (e12, e21, e10) => {
          const k12 = Math.pow(10, e12);
          const k21 = Math.pow(10, e21);
          const k10 = Math.pow(10, e10);
          const m = fromRows([
            [-(k10 + k12), k21],
            [k12, -k21],
          ]);
          const s = k12 + k21 + k10;
          const alpha = 0.5 * (s + Math.sqrt(s * s - 4 * k21 * k10));
          // β from αβ = k21·k10 (same closed form, without the cancellation of s − √…).
          const beta = (k21 * k10) / alpha;
          const e = eigenvalues(m, 2);
          expect(Array.from(e.im)).toEqual([0, 0]);
          // Closest to zero first: −β then −α. α is well conditioned. β = det/α inherits the
          // cancellation in det M = (k10+k12)k21 − k12·k21 once the rates are rounded into M's
          // entries: its relative condition is κ = (|m00·m11| + |m01·m10|)/|det M|. Nearly equal
          // roots add ‖M‖/(α − β) (eigenvalue gap; the reference's √ cancels likewise).
          const kappa = (Math.abs(m[0] * m[3]) + Math.abs(m[1] * m[2])) / (alpha * beta);
          const gap = (Math.abs(m[0]) + Math.abs(m[1]) + Math.abs(m[2]) + Math.abs(m[3])) / (alpha - beta);
          expect(Math.abs(e.re[0] + beta) / beta).toBeLessThanOrEqual(16 * U * (1 + kappa + gap));
          expect(Math.abs(e.re[1] + alpha) / alpha).toBeLessThanOrEqual(16 * U * (1 + gap));
        },
      ),
      { numRuns: 500 },
    );
  });

  test('rotation [[0, −1], [1, 0]] → ±i exactly; scaled rotation plus decay → −c ± θi', () => {
    const e = eigenvalues(fromRows([[0, -1], [1, 0]]), 2);
    expect(Array.from(e.re)).toEqual([0, 0]);
    expect(Array.from(e.im)).toEqual([1, -1]);
    const f = eigenvalues(fromRows([[-0.5, -3], [3, -0.5]]), 2); // closed form: −0.5 ± 3i
    expect(Math.abs(f.re[0] + 0.5)).toBeLessThanOrEqual(8 * U * 3.5);
    expect(Math.abs(f.im[0] - 3)).toBeLessThanOrEqual(8 * U * 3.5);
    expect(f.im[1]).toBe(-f.im[0]);
    expect(f.re[1]).toBe(f.re[0]);
  });

  test('cyclic three-compartment flow (circulant): λ_j = −k0 − k + k·ω^j, ω = e^{2πi/3}', () => {
    // 1 → 2 → 3 → 1 at rate k, elimination k0 from every compartment: a Metzler matrix with a complex pair.
    const k = 2;
    const k0 = 0.1;
    const d = -(k + k0);
    const m = fromRows([
      [d, 0, k],
      [k, d, 0],
      [0, k, d],
    ]);
    const e = eigenvalues(m, 3);
    const ref = [
      { re: -k0, im: 0 },
      { re: -k0 - 1.5 * k, im: (Math.sqrt(3) / 2) * k },
      { re: -k0 - 1.5 * k, im: -(Math.sqrt(3) / 2) * k },
    ];
    // Circulant matrices are normal, so |Δλ| ≤ ‖ΔA‖₂ (Bauer–Fike with κ(V) = 1); backward error of QR ≈ c·n·u·‖A‖.
    const tol = 64 * 3 * U * norm1Of(m, 3);
    for (let i = 0; i < 3; i++) {
      expect(Math.abs(e.re[i] - ref[i].re)).toBeLessThanOrEqual(tol);
      expect(Math.abs(e.im[i] - ref[i].im)).toBeLessThanOrEqual(tol);
    }
  });

  test('known spectrum through an orthogonal similarity P·D·P (P a Householder reflector, D normal)', () => {
    // D = blockdiag([[a, b], [−b, a]], −1e-3, −4, −250): eigenvalues a ± bi and the diagonal.
    const a = -0.7;
    const b = 1.9;
    const n = 5;
    const dm = fromRows([
      [a, b, 0, 0, 0],
      [-b, a, 0, 0, 0],
      [0, 0, -1e-3, 0, 0],
      [0, 0, 0, -4, 0],
      [0, 0, 0, 0, -250],
    ]);
    const v = [1, -2, 3, 1, -1];
    const vv = v.reduce((s, x) => s + x * x, 0);
    const p = new Float64Array(n * n);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) p[i * n + j] = (i === j ? 1 : 0) - (2 * v[i] * v[j]) / vv;
    const m = matMul(matMul(p, dm, n, new Float64Array(n * n)), p, n, new Float64Array(n * n));
    const e = eigenvalues(m, n);
    const ref = [
      { re: -1e-3, im: 0 },
      { re: a, im: b },
      { re: a, im: -b },
      { re: -4, im: 0 },
      { re: -250, im: 0 },
    ];
    // A is normal up to the rounding in forming it, so |Δλ| ≲ (forming + QR backward error) ≈ c·n·u·‖D‖.
    const tol = 64 * n * U * 250;
    for (let i = 0; i < n; i++) {
      expect(Math.abs(e.re[i] - ref[i].re)).toBeLessThanOrEqual(tol);
      expect(Math.abs(e.im[i] - ref[i].im)).toBeLessThanOrEqual(tol);
    }
  });

  test('catenary chain (triangular) → eigenvalues are exactly the diagonal, isolated by balancing', () => {
    // depot → gut → central → out: lower triangular, rates across decades.
    const m = fromRows([
      [-30, 0, 0],
      [30, -0.002, 0],
      [0, 0.002, -0.35],
    ]);
    const e = eigenvalues(m, 3);
    expect(Array.from(e.re)).toEqual([-0.002, -0.35, -30]);
    expect(Array.from(e.im)).toEqual([0, 0, 0]);
  });

  test('singular M (AUC state with zero column) has the eigenvalue 0 exactly', () => {
    const k10 = 0.3;
    const k12 = 0.8;
    const k21 = 0.05;
    const m = fromRows([
      [-(k10 + k12), k21, 0],
      [k12, -k21, 0],
      [1, 0, 0],
    ]);
    const e = eigenvalues(m, 3);
    expect(e.re[0]).toBe(0);
    expect(e.im[0]).toBe(0);
    // The remaining two are the two-compartment hybrid constants −β, −α (closed form as above).
    const s = k12 + k21 + k10;
    const alpha = 0.5 * (s + Math.sqrt(s * s - 4 * k21 * k10));
    const beta = (k21 * k10) / alpha;
    expect(Math.abs(e.re[1] + beta) / beta).toBeLessThanOrEqual(64 * U * (s / beta));
    expect(Math.abs(e.re[2] + alpha) / alpha).toBeLessThanOrEqual(64 * U);
  });

  test('a nearly defective pair near zero keeps the trace (found by the property test below)', () => {
    // Eigenvalues ±√3 and a pair near 0 (2.5e-8 and 6.8e-9) that moves by ~√u under rounding. Their
    // 2×2 block's ad − bc cancels to rounding noise, so the product formula must not be used for the
    // smaller root; the sum of the eigenvalues still equals the trace to rounding (common practice:
    // a similarity transformation preserves the trace).
    const m = Float64Array.from([-1, 0, 1, 1, 1, 1, -1, 0, 1, 0, -1, -1, 1, 1, 1, 1.0000000477631277]);
    const e = eigenvalues(m, 4);
    const sum = e.re.reduce((acc, v) => acc + v, 0);
    expect(Math.abs(sum - trace(m, 4))).toBeLessThanOrEqual(64 * 4 * U * norm1Of(m, 4));
    expect(Math.abs(e.re[0] - Math.sqrt(3))).toBeLessThan(1e-7);
    expect(Math.abs(e.re[3] + Math.sqrt(3))).toBeLessThan(1e-7);
  });

  test('rejects non-finite input; 1×1 is its own eigenvalue', () => {
    expect(() => eigenvalues(new Float64Array([NaN]), 1)).toThrow(RangeError);
    const e = eigenvalues(new Float64Array([-3.25]), 1);
    expect(e.re[0]).toBe(-3.25);
    expect(e.im[0]).toBe(0);
  });
});

describe('eigenvalues against mathjs eigs (independent QR implementation)', () => {
  /**
   * mathjs iterates to a relative tolerance of config.relTol = 1e-12 and does not
   * balance, so agreement is checked to 1e-8·‖A‖₁ (observed ≤ 3e-10·‖A‖₁). Only draws
   * whose reference eigenvalues are separated by ≥ 1e-3·‖A‖₁ are compared: a
   * (nearly) defective eigenvalue moves by ~u^{1/k}, making any two correct codes disagree.
   * The trace (Σλ) and conjugate symmetry (Σ Im λ = 0) are checked on every draw.
   * (mathjs det is not used: its zero-pivot test uses relTol and returns 0 for
   * entries that differ by ~1e-13.)
   */
  function check(n: number, m: Float64Array): void {
    const ours = eigenvalues(m, n);
    expectSorted(ours);
    const norm = norm1Of(m, n);
    let sum = 0;
    for (let i = 0; i < n; i++) sum += ours.re[i];
    expect(Math.abs(sum - trace(m, n))).toBeLessThanOrEqual(64 * n * U * norm);
    let imSum = 0;
    for (let i = 0; i < n; i++) imSum += ours.im[i];
    expect(Math.abs(imSum)).toBeLessThanOrEqual(64 * n * U * norm); // complex eigenvalues of a real matrix come in conjugate pairs

    const refs = mathjsEigenvalues(m, n);
    if (refs === null || minSeparation(refs) < 1e-3 * norm) return;
    expect(matchError(ours, refs)).toBeLessThanOrEqual(1e-8 * norm);
  }

  test('random compartment matrices, rates 1e-4..1e3 (some singular)', () => {
    fc.assert(
      fc.property(compartmentMatrix(2, 8, -4, 3), ({ n, m }) => check(n, m)),
      { numRuns: 300 },
    );
  });

  test('random general matrices, mixed signs and scales (complex pairs occur)', () => {
    fc.assert(
      fc.property(mixedMatrix(2, 8, -2, 1), ({ n, m }) => check(n, m)),
      { numRuns: 300 },
    );
  });

  test('40×40 compartment matrix with a reused workspace', () => {
    const n = 40;
    const ws = createEigenWorkspace(n);
    const out = createEigenvalues(n);
    fc.assert(
      fc.property(compartmentMatrix(n, n, -2, 1, false), ({ m }) => {
        eigenvalues(m, n, ws, out);
        const norm = norm1Of(m, n);
        let sum = 0;
        for (let i = 0; i < n; i++) sum += out.re[i];
        expect(Math.abs(sum - trace(m, n))).toBeLessThanOrEqual(64 * n * U * norm);
        // Gershgorin (columns of a compartment matrix with exits): every eigenvalue has Re λ < 0.
        for (let i = 0; i < n; i++) expect(out.re[i]).toBeLessThan(64 * n * U * norm);
        const refs = mathjsEigenvalues(m, n);
        if (refs !== null && minSeparation(refs) >= 1e-3 * norm) expect(matchError(out, refs)).toBeLessThanOrEqual(1e-8 * norm);
      }),
      { numRuns: 3 }, // mathjs eigs needs ~2 s per 40×40 matrix
    );
  });
});
