/**
 * The terminal line: the least-squares fit of ln C on t, adjusted R², and the choice of points
 * (best adjusted R² over the last n ≥ 3 points, ties within 1e-4 to more points, fixed points kept).
 */
import { lusolve } from 'mathjs';
import { describe, expect, it } from 'vitest';
import { adjustedR2, logLinearFit, selectTerminalPhase } from '../../models/levels/terminal-phase.ts';

const range = (a: number, b: number) => Array.from({ length: b - a }, (_, i) => a + i);

describe('logLinearFit', () => {
  it('reproduces a hand-worked line and its adjusted R² (textbook least squares; adjusted R² = 1 − (1 − R²)(n − 1)/(n − 2))', () => {
    // x = 1, 2, 3, 4 and ln C = 3, 2, 2, 1. By hand: x̄ = 2.5, ȳ = 2; Sxx = 2.25 + 0.25 + 0.25 + 2.25 = 5,
    // Sxy = (−1.5)(1) + 0 + 0 + (1.5)(−1) = −3, Syy = 1 + 0 + 0 + 1 = 2. Slope −3/5 = −0.6, intercept
    // 2 + 0.6·2.5 = 3.5; R² = Sxy²/(Sxx·Syy) = 9/10 = 0.9; adjusted 1 − 0.1·3/2 = 0.85.
    const t = [1, 2, 3, 4];
    const c = [3, 2, 2, 1].map(Math.exp);
    const fit = logLinearFit(t, c, [0, 1, 2, 3]);
    expect(fit.rate).toBeCloseTo(0.6, 14);
    expect(fit.intercept).toBeCloseTo(3.5, 14);
    expect(fit.r2).toBeCloseTo(0.9, 14);
    expect(fit.adjustedR2).toBeCloseTo(0.85, 14);
    expect(adjustedR2(0.9, 4)).toBeCloseTo(0.85, 15);
    expect(adjustedR2(1, 2)).toBeNull();
  });

  it('agrees with the normal equations solved by mathjs lusolve on scattered data (independent library)', () => {
    const t = [2, 3, 5, 7, 11, 13, 17];
    const c = [9.1, 7.7, 5.2, 3.9, 2.05, 1.52, 0.81];
    const y = c.map(Math.log);
    const n = t.length;
    const st = t.reduce((a, b) => a + b, 0);
    const stt = t.reduce((a, b) => a + b * b, 0);
    const sy = y.reduce((a, b) => a + b, 0);
    const sty = t.reduce((a, b, i) => a + b * y[i], 0);
    const solved = lusolve([[n, st], [st, stt]], [sy, sty]) as number[][];
    const fit = logLinearFit(t, c, range(0, n));
    // The normal equations lose about cond ≈ 1e3 of accuracy; 1e-10 relative is far above that.
    expect(fit.intercept).toBeCloseTo(solved[0][0], 10);
    expect(-fit.rate / solved[1][0]).toBeCloseTo(1, 10);
  });
});

describe('selectTerminalPhase', () => {
  // A line 5·e^(−0.15 t) from t = 4 on, with a distribution phase 20·e^(−1.2 t) added before it.
  const t = [0.25, 0.5, 1, 2, 3, 4, 6, 8, 12, 16, 24];
  const c = t.map((x) => 5 * Math.exp(-0.15 * x) + (x < 4 ? 20 * Math.exp(-1.2 * x) : 0));
  const all = range(0, t.length);

  it('chooses exactly the points on the terminal line, and its rate to 1e-12 (exact exponential)', () => {
    const phase = selectTerminalPhase(t, c, all);
    expect(phase.ok).toBe(true);
    if (!phase.ok) return;
    expect(phase.indices).toEqual([5, 6, 7, 8, 9, 10]);
    expect(phase.chosenBy).toBe('best adjusted R²');
    expect(Math.abs(phase.fit.rate - 0.15) / 0.15).toBeLessThan(1e-12);
    expect(phase.fit.adjustedR2).toBeCloseTo(1, 12);
  });

  it('breaks a tie within 1e-4 of adjusted R² toward more points (the stated rule)', () => {
    // The last 3 points exactly on a line of slope −0.2 (adjusted R² 1), the earlier ones off it by
    // ±1e-3 in ln C: over 20 h every longer fit has 1 − R² of order 1e-6, well within the tie distance.
    const tt = range(0, 11).map((i) => 2 * i);
    const cc = tt.map((x, i) => Math.exp(2 - 0.2 * x + (i >= 8 ? 0 : i % 2 === 0 ? 1e-3 : -1e-3)));
    const phase = selectTerminalPhase(tt, cc, range(0, 11));
    expect(phase.ok && phase.indices.length).toBe(11);
    // The 3-point fit alone is better (its adjusted R² is the highest) yet the longer one is within the tie distance.
    const three = logLinearFit(tt, cc, [8, 9, 10]);
    const eleven = logLinearFit(tt, cc, range(0, 11));
    expect(three.adjustedR2 ?? 0).toBeGreaterThan(eleven.adjustedR2 ?? 1);
    expect((three.adjustedR2 ?? 0) - (eleven.adjustedR2 ?? 0)).toBeLessThan(1e-4);
  });

  it('keeps fixed points, gives the line through exactly 2 candidates marked as such, refuses fewer (common practice)', () => {
    const fixed = selectTerminalPhase(t, c, all, [7, 8, 9]);
    expect(fixed.ok && fixed.indices).toEqual([7, 8, 9]);
    expect(fixed.ok && fixed.chosenBy).toBe('fixed');
    // Two candidates give the line through them, marked as such (the caller flags it); one gives none.
    const two = selectTerminalPhase(t, c, [9, 10]);
    expect(two.ok && two.chosenBy).toBe('two levels only');
    expect(two.ok && two.indices).toEqual([9, 10]);
    const few = selectTerminalPhase(t, c, [10]);
    expect(few.ok).toBe(false);
    if (!few.ok) expect(few.reason).toMatch(/1 positive level after Cmax; at least 3/);
    const outside = selectTerminalPhase(t, c, [8, 9, 10], [7, 8]);
    expect(outside.ok).toBe(false);
  });

  it('gives no rate for levels that rise', () => {
    const phase = selectTerminalPhase([1, 2, 3], [1, 2, 3], [0, 1, 2]);
    expect(phase.ok).toBe(false);
  });
});
