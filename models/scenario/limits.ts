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
  /** Longest simulated span, in hours (about 114,000 years): beyond it times lose their resolution. */
  spanHours: 1e9,
  /** Dosing cycles tried when iterating a saturable model to steady state. */
  steadyStateCycles: 2_000,
} as const;
