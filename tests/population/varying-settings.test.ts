/**
 * settings.varying in the JSON and text results carries each quantity's cv and kind of
 * variation, as the report prints them ("cv 20%, log-normal"): log-normal unless written,
 * logit-normal for a bioavailability (the reader's defaults).
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { simulatePopulation } from '../../models/population/population.ts';
import { populationToText } from '../../server/population-text.ts';

const demo = JSON.parse(readFileSync(new URL('../../samples/halvorin-population-infusion.json', import.meta.url), 'utf8'));

describe('settings.varying', () => {
  const s = JSON.parse(JSON.stringify(demo));
  s.population.subjects = 20;
  delete s.population.regimens;
  s.output.end = '1 day';
  s.output.step = '1 h';
  s.doses[0].bioavailability = { typical: 0.9, cv: 0.15 };
  const r = simulatePopulation(s);
  if (!r.ok) throw new Error(JSON.stringify(r.problems));

  it('gives each quantity its cv (a fraction) and variation', () => {
    expect(JSON.parse(JSON.stringify(r.value.settings.varying))).toEqual([
      { quantity: 'V1', path: 'compartments[0].volume', cv: 0.2, variation: 'log-normal' },
      { quantity: 'CL', path: 'transfers[0].cl', cv: 0.3, variation: 'log-normal' },
      { quantity: 'doses[0].bioavailability', path: 'doses[0].bioavailability', cv: 0.15, variation: 'logit-normal' },
    ]);
  });

  it('prints them in the text', () => {
    const text = populationToText(r.value);
    expect(text).toContain('  V1 (compartments[0].volume): cv 20%, log-normal\n');
    expect(text).toContain('  CL (transfers[0].cl): cv 30%, log-normal\n');
    expect(text).toContain('  doses[0].bioavailability (doses[0].bioavailability): cv 15%, logit-normal\n');
  });
});
