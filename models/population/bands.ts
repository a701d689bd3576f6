/**
 * Percentile bands over time from a population's grids of concentrations: what any thread
 * holding the grids (shared, not copied) can find for a range of output times, knowing only the
 * grid's shape (BandShape), the percentiles and the seed — nothing of the scenario or the solver.
 */
import type { Batch } from './batch.ts';
import type { PopulationPlan } from './plan.ts';
import { SubjectRandom, STREAMS } from './random.ts';
import { TrackedPercentiles } from './tracked-percentiles.ts';

/** The residual error of simulated observations (PopulationPlan's), or null for concentrations. */
type Residual = PopulationPlan['residual'];

/** A batch's concentrations and whose they are: all a band needs (what a thread is sent). */
export type GridPart = Pick<Batch, 'first' | 'count' | 'grid'>;

/** What the bands read of a plan: its grid's shape, the percentiles, and the seed of the residual draws. */
export interface BandShape {
  /** Output times (T) and banded compartments (B) of the grid; subjects in all (N). */
  times: number;
  banded: number;
  subjects: number;
  percentiles: readonly number[];
  seed: number;
}

export function bandShape(plan: PopulationPlan): BandShape {
  return { times: plan.template.outputTimes.length, banded: plan.layout.banded.length, subjects: plan.subjects, percentiles: plan.percentiles, seed: plan.seed };
}

/** Time columns handled together: their values for every subject fit in a fast cache. */
const BLOCK = 64;

/**
 * The bands over output times [from, to) — compartment b, percentile k, time j at
 * ((b·K + k)·(to − from) + j − from) — from the batches in subject order. A range of times is
 * one thread's share of the bands; ranges joined (joinBandRanges) give the bands of all times.
 *
 * The subjects' concentrations at each output time are gathered a block of times at a time
 * (each subject's run is contiguous in time, so a block is read in short runs rather than one
 * value per subject per time), then their percentiles found near the previous time's
 * (TrackedPercentiles). With a residual error, the bands of simulated observations instead:
 * each concentration with a proportional and an additive error, y = C·(1 + p·e₁) + a·e₂, e₁ and
 * e₂ standard normal (the combined error model, common practice), from the subject's own
 * residual stream at that compartment and time, so an observation is the same whoever computes it.
 */
export function bandValues(shape: BandShape, batches: readonly GridPart[], residual: Residual, from: number, to: number): Float64Array {
  const T = shape.times;
  const B = shape.banded;
  const N = shape.subjects;
  const K = shape.percentiles.length;
  const span = to - from;
  const values = new Float64Array(B * K * span);
  const block = new Float64Array(BLOCK * N);
  const picked = new Float64Array(K);
  const randoms = residual ? batches.flatMap((batch) => Array.from({ length: batch.count }, (_, s) => new SubjectRandom(shape.seed, batch.first + s))) : [];
  for (let b = 0; b < B; b++) {
    // Output times in order: each time's percentiles sought first near the previous time's.
    const tracker = new TrackedPercentiles(N, shape.percentiles);
    for (let j0 = from; j0 < to; j0 += BLOCK) {
      const width = Math.min(BLOCK, to - j0);
      let i = 0;
      for (const batch of batches) {
        const g = batch.grid;
        for (let s = 0; s < batch.count; s++, i++) {
          const row = (s * B + b) * T + j0;
          if (!residual) {
            for (let t = 0; t < width; t++) block[t * N + i] = g[row + t];
            continue;
          }
          const random = randoms[i];
          for (let t = 0; t < width; t++) {
            const e = b * T + j0 + t;
            block[t * N + i] = g[row + t] * (1 + residual.proportional * random.normal(STREAMS.residual, 2 * e)) + residual.additive * random.normal(STREAMS.residual, 2 * e + 1);
          }
        }
      }
      for (let t = 0; t < width; t++) {
        tracker.next(block.subarray(t * N, (t + 1) * N), picked);
        for (let k = 0; k < K; k++) values[(b * K + k) * span + j0 - from + t] = picked[k];
      }
    }
  }
  return values;
}

/** Band values of consecutive time ranges covering [0, T), each as bandValues lays it out, as one for all times. */
export function joinBandRanges(shape: BandShape, ranges: readonly { from: number; to: number; values: Float64Array }[]): Float64Array {
  const T = shape.times;
  const rows = shape.banded * shape.percentiles.length;
  const out = new Float64Array(rows * T);
  for (const r of ranges) {
    const span = r.to - r.from;
    for (let row = 0; row < rows; row++) out.set(r.values.subarray(row * span, (row + 1) * span), row * T + r.from);
  }
  return out;
}

/** One thread's share of the bands: concentrations, and simulated observations when there is a residual error. */
export interface BandRange {
  from: number;
  to: number;
  values: Float64Array;
  observations: Float64Array | null;
}

/** bandValues over [from, to) for concentrations and, with a residual error, for simulated observations. */
export function bandRange(shape: BandShape, residual: Residual, parts: readonly GridPart[], from: number, to: number): BandRange {
  return { from, to, values: bandValues(shape, parts, null, from, to), observations: residual ? bandValues(shape, parts, residual, from, to) : null };
}
