/**
 * The report's measured levels, read back with pdftotext: the clock origin, and for every
 * observation of the sample its clock time, the model's value (the engine's, formatted as the
 * report formats every figure) and the residual, with the caution beside them.
 */
import { afterAll, describe, expect, it } from 'vitest';
import { buildReport } from '../../server/report/report.ts';
import { simulate } from '../../models/index.ts';
import { fmt } from '../../models/result/summary-text.ts';
import { pdfPages, readSample, removeTempFiles, squeeze } from '../report/helpers.ts';

afterAll(removeTempFiles);

describe('report: measured levels', () => {
  it('lists each level with its clock time, the model value and the residual', () => {
    const scenario = readSample('orvanix-levels');
    const report = buildReport({ scenario });
    if (!report.ok) throw new Error(JSON.stringify(report.problems));
    const text = squeeze(pdfPages(report.bytes).join('\n'));
    const result = simulate(scenario);
    if (!result.ok) throw new Error('failed');
    expect(text).toContain('Time 0 is 2026-03-04 08:00 (+01:00) (from clock.origin)');
    expect(text).toContain('not a fit to them and not dosing advice');
    for (const o of result.value.observations) {
      const residual = o.residual === null ? '—' : `${o.residual >= 0 ? '+' : ''}${fmt(o.residual)}`;
      const measured = o.belowLimit ? `< ${fmt(o.limit)}` : fmt(o.concentration);
      expect(text).toMatch(new RegExp(`${fmt(o.time).replace('.', '\\.')} \\d{4}-\\d\\d-\\d\\d \\d\\d:\\d\\d \\(\\+01:00\\) central ${measured.replace('.', '\\.')} ${fmt(o.predicted).replace('.', '\\.')} ${residual.replace('.', '\\.').replace('+', '\\+')}`));
    }
  });
});
