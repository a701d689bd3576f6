/**
 * A loading dose aimed at the steady-state trough can break a ceiling in its own first interval:
 * samples/orvanix-propose.json's rank 1 (500 mg every 12 h over 30 min) would take 1250 mg, whose
 * first-interval peak is 30.5 mg/L, above the 25 mg/L ceiling. The proposal lowers it to the
 * largest sum of strengths above the maintenance dose that keeps every upper bound there, 1000 mg,
 * and says so in the row's note. Both first intervals are checked against independent runs of
 * simulate() with the loading dose first; the words against hand-made targets.
 */
import { describe, expect, it } from 'vitest';
import { figureBeside, firstIntervalNote, missWords } from '../../models/regimen/loading.ts';
import { simulatedLoading } from '../../models/regimen/proposal-words.ts';
import type { ReadTarget } from '../../models/population/targets.ts';
import { proposalsText } from '../../server/propose-cli.ts';
import { propose, sample, simulateRegimen } from './helpers.ts';

const saturable = sample('orvanix-propose.json');
const result = propose(saturable);
const units = { concentration: 'mg/L', auc: 'mg/L·h' };
const lowered =
  "the loading dose is lowered from 1250 mg, the amount aimed at the steady-state trough, to 1000 mg, the largest sum of strengths that keeps every upper bound in its first interval: at 1250 mg, the loading dose's first-interval peak 30.5 mg/L is above the 25 mg/L ceiling (target 2)";

describe('a loading dose lowered to keep the peak ceiling in its first interval (samples/orvanix-propose.json)', () => {
  const first = result.proposals[0];
  const loading = simulatedLoading(first);
  const regimen = { amount: first.amount, interval: first.interval, duration: first.duration, into: 'central' };

  it("gives 1000 mg, not the 1250 mg aimed at the trough, and says why in rank 1's note", () => {
    expect(first.rank).toBe(1);
    expect(loading?.amount).toBe(1000);
    expect(loading?.loweredFrom).toBe(1250);
    expect(loading?.firstIntervalMet).toBe(true);
    expect(loading?.firstIntervalTargetsMet).toEqual([true, true]);
    expect(first.note).toBe(lowered);
  });

  it('keeps the ceiling at 1000 mg and breaks it at 1250 mg, as simulate() gives them with the loading dose first', () => {
    const at1000 = simulateRegimen(saturable, { ...regimen, loading: 1000 }, 2, 'central');
    const at1250 = simulateRegimen(saturable, { ...regimen, loading: 1250 }, 2, 'central');
    // The same model integrated twice, by the proposal's interval walk and by simulate(): they agree to the
    // integration's error, as propose.test.ts holds the first trough to 1e-6; common practice for two solves.
    expect(Math.abs((loading?.firstInterval[1] as number) / at1000[0].cmax - 1)).toBeLessThan(1e-6);
    expect(at1000[0].cmax).toBeLessThanOrEqual(25);
    expect(at1250[0].cmax).toBeGreaterThan(25);
    expect(Number(at1250[0].cmax.toPrecision(3))).toBe(30.5);
    // 1000 mg is the largest sum of the 250 and 500 mg vials below 1250 mg: nothing between was skipped.
    expect(at1000[0].trough).toBeGreaterThanOrEqual(4);
  });

  it('says it under the text table, keyed by rank', () => {
    const text = proposalsText(result, result.proposals.length);
    expect(text).toContain(`notes:\n  rank 1: ${lowered}`);
  });

  it('adds no first-interval note to a loading dose whose first interval meets every target', () => {
    for (const p of result.proposals) {
      const l = simulatedLoading(p);
      if (l?.firstIntervalMet) expect(p.note ?? '').not.toMatch(/; the loading dose's first-interval/);
    }
  });

  it('keeps the aimed amount, with its miss in the note, when no smaller sum keeps the ceiling', () => {
    const tight = JSON.parse(JSON.stringify(saturable));
    // Only vials of 500 mg and a ceiling no loading dose above 500 mg keeps: 1000 mg peaks at 24.3 mg/L.
    tight.propose.strengths = ['500 mg'];
    tight.propose.targets[1] = { peak: { atMost: '20 mg/L' } };
    const r = propose(tight);
    const loaded = r.proposals.filter((p) => simulatedLoading(p) !== null);
    // 500 mg every 12 h meets both targets; its loading dose rounds to 1500 mg, and 1000 mg (the one sum between) peaks above 20 mg/L too.
    expect(loaded.length).toBeGreaterThan(0);
    for (const p of loaded) {
      const l = simulatedLoading(p);
      expect(l?.loweredFrom).toBeNull();
      expect(l?.firstIntervalMet).toBe(false);
      expect(p.note ?? '').toMatch(/^the loading dose's first-interval peak [\d.]+ mg\/L is above the 20 mg\/L ceiling \(target 2\)$/);
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
