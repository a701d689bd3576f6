/**
 * The dense store's look-up across its blocks of step records: stateAt and sample find the
 * same step as a plain linear search, on either side of every step boundary, including
 * zero-length steps and boundaries that coincide with block boundaries (1024 steps each);
 * and its byte count is what it allocated.
 */
import { describe, expect, it } from 'vitest';
import { DenseStore, STEP_RECORD_BYTES } from '../../models/solving/numerics/dense-store';
import type { DenseForm } from '../../models/solving/numerics/dense-store';

/** A form whose value is the stored scalar: identifies the step that was evaluated. */
const tagForm: DenseForm = {
  vectors: 1,
  evaluate(_theta, coef, offset, _n, out) {
    out[0] = coef[offset];
  },
};

/** Steps of uneven lengths, with a few of zero length (as at a bolus), tagged by index. */
function build(count: number): { store: DenseStore; starts: number[] } {
  const store = new DenseStore(1);
  const starts: number[] = [];
  let t = 0;
  for (let k = 0; k < count; k++) {
    const h = k % 97 === 5 ? 0 : 0.5 + ((k * 7919) % 13) / 10;
    starts.push(t);
    store.append(t, h, tagForm, Float64Array.of(k));
    t += h;
  }
  return { store, starts };
}

/** The reference: last step whose start is < t (left) or <= t (right), else step 0. */
function linear(starts: number[], t: number, side: 'left' | 'right'): number {
  let found = 0;
  for (let k = 0; k < starts.length; k++) if (side === 'left' ? starts[k] < t : starts[k] <= t) found = k;
  return found;
}

describe('dense store look-up', () => {
  it.each([1, 1023, 1024, 1025, 3 * 1024 + 17])('%i steps: stateAt finds the step a linear search finds', (count) => {
    const { store, starts } = build(count);
    const out = new Float64Array(1);
    const probes: number[] = [-1];
    for (const s of starts) probes.push(s, s + 0.25);
    probes.push(store.end, store.end + 1);
    for (const t of probes) {
      for (const side of ['left', 'right'] as const) {
        store.stateAt(t, side, out);
        expect(out[0]).toBe(linear(starts, t, side));
      }
    }
  });

  it('sample walks to the same steps as stateAt', () => {
    const { store, starts } = build(2 * 1024 + 300);
    const times: number[] = [];
    const sides: number[] = [];
    // Ascending, the left limit before the right one at a shared time (sample's contract: the rows of
    // the output, before and after a bolus): each distinct start once.
    for (const s of new Set(starts.slice(0, -1))) {
      times.push(s, s, s + 0.1);
      sides.push(0, 1, 1);
    }
    const got: number[] = [];
    store.sample(Float64Array.from(times), Uint8Array.from(sides), (_row, y) => got.push(y[0]));
    const out = new Float64Array(1);
    times.forEach((t, row) => {
      store.stateAt(t, sides[row] === 0 ? 'left' : 'right', out);
      expect(got[row]).toBe(out[0]);
    });
  });

  it('counts the bytes of its chunks and record blocks', () => {
    const { store } = build(1025);
    // 1025 one-value steps fit one 64 KiB chunk; their records take two blocks of 1024.
    expect(store.bytes).toBe(65536 + 2 * 1024 * STEP_RECORD_BYTES);
    expect(store.projectedBytes(0, 1)).toBe(store.bytes);
  });
});
