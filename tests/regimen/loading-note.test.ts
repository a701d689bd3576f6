/**
 * A loading dose whose own first interval misses a target is said in words in the row's note:
 * samples/orvanix-propose.json's rank 1 (500 mg every 12 h over 30 min, 1250 mg loading) peaks
 * above the 25 mg/L ceiling in its first interval. The figure in the note is checked against an
 * independent run of simulate() with the loading dose first; the words against hand-made targets.
 */
import { describe, expect, it } from 'vitest';
import { figureBeside, firstIntervalNote, missWords } from '../../models/regimen/loading.ts';
import { proposeRegimens, simulatedLoading, type ProposeResult } from '../../models/regimen/propose.ts';
import type { ReadTarget } from '../../models/population/targets.ts';
import { proposalsText } from '../../server/propose-cli.ts';
import { sample, simulateRegimen } from './helpers.ts';

function propose(s: unknown): ProposeResult {
  const r = proposeRegimens(s);
  if (!r.ok) throw new Error(JSON.stringify(r.problems));
  return r.value;
}

const saturable = sample('orvanix-propose.json');
const result = propose(saturable);
const units = { concentration: 'mg/L', auc: 'mg/L·h' };

describe("a loading dose's first interval that breaks the peak ceiling (samples/orvanix-propose.json)", () => {
  const first = result.proposals[0];
  const loading = simulatedLoading(first);

  it("names the ceiling and the first interval's peak in rank 1's note", () => {
    expect(first.rank).toBe(1);
    expect(loading?.amount).toBe(1250);
    expect(loading?.firstIntervalMet).toBe(false);
    expect(loading?.firstIntervalTargetsMet).toEqual([true, false]);
    expect(first.note).toBe("the loading dose's first-interval peak 30.5 mg/L is above the 25 mg/L ceiling (target 2)");
  });

  it("takes the peak from the loading dose's first interval, as simulate() gives it with the loading dose first", () => {
    const intervals = simulateRegimen(saturable, { amount: first.amount, interval: first.interval, duration: first.duration, into: 'central', loading: loading?.amount }, 2, 'central');
    // The same model integrated twice, by the proposal's interval walk and by simulate(): they agree to the
    // integration's error, as propose.test.ts holds the first trough to 1e-6; common practice for two solves.
    expect(Math.abs((loading?.firstInterval[1] as number) / intervals[0].cmax - 1)).toBeLessThan(1e-6);
    expect(intervals[0].cmax).toBeGreaterThan(25);
    expect(Number(intervals[0].cmax.toPrecision(3))).toBe(30.5);
  });

  it('says it under the text table, keyed by rank', () => {
    const text = proposalsText(result, result.proposals.length);
    expect(text).toMatch(/notes:\n {2}rank 1: the loading dose's first-interval peak 30\.5 mg\/L is above the 25 mg\/L ceiling \(target 2\)/);
  });

  it('adds no such note to a loading dose whose first interval meets every target', () => {
    for (const p of result.proposals) {
      const l = simulatedLoading(p);
      if (l?.firstIntervalMet) expect(p.note ?? '').not.toMatch(/first-interval/);
    }
  });
});

/** A target as targets.ts reads it, for the words alone. */
function target(measure: ReadTarget['measure'], atLeast: number | null, atMost: number | null, from: number | null = null, to: number | null = null): ReadTarget {
  return { index: 0, compartment: 0, period: 'steady state', measure, atLeast, atMost, from, to, ceiling: atLeast === null, words: '' };
}

describe('the words of a missed first-interval target', () => {
  it('says a ceiling, an upper and a lower bound, a floor, a share and an undetermined figure (hand-made cases)', () => {
    expect(missWords(target('peak', null, 25), 30.4622, units)).toBe('30.5 mg/L is above the 25 mg/L ceiling');
    expect(missWords(target('trough', 4, 10), 11.2, units)).toBe('11.2 mg/L is above the 10 mg/L upper bound');
    expect(missWords(target('trough', 4, 10), 3.21, units)).toBe('3.21 mg/L is below the 4 mg/L lower bound');
    expect(missWords(target('trough', 4, null), 3.5, units)).toBe('3.5 mg/L is below the 4 mg/L floor');
    expect(missWords(target('auc24', null, 400), 412.3, units)).toBe('412 mg/L·h is above the 400 mg/L·h ceiling');
    expect(missWords(target('above', 0.4, null, 8), 0.25, units)).toBe('25% is below the 40% required');
    expect(missWords(target('peak', null, 25), NaN, units)).toBe('was not determined');
    expect(missWords(target('peak', null, 25), 24.9, units)).toBeNull();
  });

  it('shows a figure with enough digits to differ from its bound', () => {
    expect(figureBeside(25.04, 25)).toBe('25.04');
    expect(figureBeside(30.4622, 25)).toBe('30.5');
    expect(figureBeside(3.9996, 4)).toBe('3.9996');
  });

  it('names each missed target by number, in the targets order', () => {
    const targets = [target('trough', 4, 10), { ...target('above', 0.4, null, 8), index: 1 }, { ...target('peak', null, 25), index: 2 }];
    expect(firstIntervalNote(targets, [3.2, 0.5, 31], units)).toBe(
      "the loading dose's first-interval trough 3.2 mg/L is below the 4 mg/L lower bound (target 1); its first-interval peak 31 mg/L is above the 25 mg/L ceiling (target 3)",
    );
    expect(firstIntervalNote(targets, [5, 0.5, 20], units)).toBeNull();
  });
});
