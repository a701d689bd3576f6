/**
 * Real-axis stability limits of the fixed-step methods: the largest x such that the method
 * applied to y' = λy with h·λ ∈ [−x, 0] does not grow (|R(hλ)| ≤ 1 for the Runge–Kutta
 * methods, spectral radius ≤ 1 for the two-step method). A fixed step beyond x/|λ| for the
 * model's fastest rate gives a solution that grows instead of decaying.
 *
 * Checked in tests/numerics/stability.test.ts: the Runge–Kutta limits as roots of |R(−x)| = 1
 * with R computed from the tableaux, the ABM2 limit as the root of the spectral radius of the
 * recursion read off the engine's own steps, and the engine's behaviour on both sides.
 */
export const realStabilityLimit: Readonly<Record<string, number>> = {
  // R(z) = 1 + z, |R(−x)| ≤ 1 for x ≤ 2 (Hairer & Wanner, Solving ODEs II, §IV.2).
  euler: 2,
  // R(z) = 1 + z + z²/2 = 1 at z = −2 (Hairer & Wanner, Solving ODEs II, §IV.2).
  heun: 2,
  // R(z) = Σ_{k≤4} z^k/k!; R(−x) = 1 at the real root of x³ − 4x² + 12x − 24 (Hairer & Wanner, Solving ODEs II, §IV.2, Fig. 2.1).
  rk4: 2.785293563405282,
  // PECE, AB2 predictor and trapezoidal corrector: ζ² − (1 + z + ¾z²)ζ + ¼z², the P(EC)E stability polynomial (Lambert 1991, Numerical Methods for Ordinary Differential Systems, ch. 4, predictor–corrector stability); at z = −2 a double root ζ = 1, below it a complex pair with |ζ| = |z|/2 < 1.
  abm2: 2,
};
