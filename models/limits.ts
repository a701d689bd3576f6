/**
 * Size limits of one scenario, so that a single request cannot exhaust memory or time.
 * The README states them; the normaliser reports the field that exceeds one.
 */
export const limits = {
  compartments: 40,
  transfers: 200,
  doseLines: 1000,
  /** Administrations after repeats are expanded. */
  administrations: 100_000,
  /** Reported time points (requested grid plus explicit times). */
  outputPoints: 2_000_000,
  thresholds: 20,
  /** Dosing cycles tried when iterating a saturable model to steady state. */
  steadyStateCycles: 2_000,
} as const;
