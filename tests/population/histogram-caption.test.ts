/**
 * The page's histogram caption names the middle chosen percentile, as the band's line does: the
 * median when 50 is among the percentiles, else the middle one of those chosen (never "median —").
 */
import { describe, expect, it } from 'vitest';
import { bandKeys, histogramCaption } from '../../client/src/population-results.ts';
import type { FigureSummary } from '../../models/population/summary.ts';

const figure = (percentiles: Record<string, number>): FigureSummary => ({ percentiles, mean: 7.5, subjects: 200, histogram: null });

describe('histogram caption', () => {
  it('without 50: the middle chosen percentile, the one the band draws', () => {
    const chosen = ['5', '25', '95'];
    expect(bandKeys(chosen).mid).toBe('25');
    expect(histogramCaption('Trough', 'steady state', figure({ 5: 2, 25: 4.25, 95: 12 }), chosen, 'mg/L')).toBe('Trough, steady state: 25th percentile 4.25 mg/L, mean 7.5 mg/L, 200 subjects.');
  });

  it('with 50: the median', () => {
    expect(histogramCaption('Cmax', 'dosing interval 1', figure({ 10: 20, 50: 31, 90: 44 }), ['10', '50', '90'], 'mg/L')).toBe('Cmax, dosing interval 1: median 31 mg/L, mean 7.5 mg/L, 200 subjects.');
  });
});
