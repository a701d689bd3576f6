// The report's sections on measured levels, read back with pdftotext: non-compartmental
// analysis (figures as ncaOfModel computes them), the individual's fit (estimates, standard
// errors and correlations as fitScenario returns them, to the printed digits), regimen
// proposals (the first row as proposeRegimens ranks it, the count searched), the cautions,
// and a fit the scenario asks for but cannot run refused with its path. The expected numbers
// come from the core functions run here and are formatted with the report's own fmt, so the
// check is that the report prints what the computation gave, not a recalled value.
import { afterAll, describe, expect, it } from 'vitest';
import { BAND_DRAWS } from '../../models/fitting/band.ts';
import { fitScenario } from '../../models/fitting/fit.ts';
import type { FitResult } from '../../models/fitting/result.ts';
import { ncaOfModel } from '../../models/levels/nca-scenario.ts';
import { PROPOSAL_CAUTION, proposeRegimens } from '../../models/regimen/propose.ts';
import { normaliseScenario } from '../../models/scenario/normalize.ts';
import { fmt } from '../../server/report/format.ts';
import { buildReport } from '../../server/report/report.ts';
import { escapeRegExp, pdfInfo, pdfPages, readSample, removeTempFiles } from './helpers.ts';

const now = new Date(Date.UTC(2031, 4, 17, 9, 30));

function report(scenario: unknown) {
  const outcome = buildReport({ scenario }, { now });
  if (!outcome.ok) throw new Error(`no report: ${JSON.stringify(outcome.problems)}`);
  const pages = pdfPages(outcome.bytes);
  return { outcome, pages, flat: pages.join('\n').replace(/\s+/g, ' ') };
}

/** The fit sample with a small population: the prior is the same, the population section quicker. */
function fitSample(): Record<string, unknown> {
  const s = readSample('orvanix-fit');
  return { ...s, population: { ...(s.population as Record<string, unknown>), subjects: 40 } };
}

const ws = (parts: string[]) => new RegExp(parts.map(escapeRegExp).join('\\s+'));

afterAll(removeTempFiles);

describe('report of a fit to measured levels', () => {
  const scenario = fitSample();
  const { outcome, pages, flat } = report(scenario);
  const fitted = fitScenario(scenario);
  if (!fitted.ok) throw new Error(JSON.stringify(fitted.problems));
  const r: FitResult = fitted.value;

  it('has the NCA and fit sections after the population, numbered on, and no proposals', () => {
    expect(flat).toContain('8 Virtual population');
    expect(flat).toContain('9 Non-compartmental analysis of the measured levels');
    expect(flat).toContain('10 Individual parameters from the measured levels');
    expect(flat).not.toContain('Regimen proposals');
    expect(flat).toContain('Figure 5. Goodness of fit');
  });

  it('draws the predicted curve with its 90% band, the caption saying what the band is', () => {
    expect(r.curves[0].lower).not.toBeNull();
    expect(flat).toContain("Figure 4. The individual's predicted concentration in central from the estimates, with the shaded 90% band");
    expect(flat).toContain(`the curves of ${BAND_DRAWS} parameter sets drawn from the estimates' uncertainty`);
    expect(flat).toContain('The band is the parameter uncertainty only, not the residual error of a measurement');
    expect(flat).toContain('Dashed: the curve at the typical values as entered (the centre of the prior)');
    expect(flat).toContain('90% band from the parameter uncertainty');
    expect(flat).toContain('measured level (hollow: below the limit, drawn at the limit; left out of the fit)');
  });

  it('gives each level its clock time as the measured-levels table does (with the zone)', () => {
    // Independent of models/levels/clock.ts: the origin 2026-03-04T08:00 at +01:00 plus the elapsed hours, by Date arithmetic.
    const origin = Date.UTC(2026, 2, 4, 7, 0);
    // The fit's own section only: the measured-levels table of section 3 lists the same times.
    const fitSection = flat.slice(flat.indexOf('10 Individual parameters from the measured levels'));
    for (const p of r.predictions) {
      const wall = new Date(Math.round((origin + p.time * 3_600_000 + 3_600_000) / 1000) * 1000).toISOString();
      expect(fitSection).toContain(`${wall.slice(0, 10)} ${wall.slice(11, 16)} (+01:00)`);
    }
  });

  it('prints each estimate, its standard error and RSE as fitScenario gives them', () => {
    for (const [name, e] of Object.entries(r.estimates)) {
      const rse = `${(100 * (e.relativeStandardError as number)).toFixed(1)}%`;
      expect(flat).toMatch(ws([name, fmt(e.value), e.unit, fmt(e.standardError), rse, fmt(e.typical)]));
    }
    // CL printed to 4 significant digits, e.g. 3.51 L/h.
    expect(Number(fmt(r.estimates.CL.value))).toBeCloseTo(r.estimates.CL.value, 2);
  });

  it('prints the correlations, the convergence in words, the objective and every level', () => {
    const names = r.correlation?.names ?? [];
    expect(names.length).toBe(3);
    expect(flat).toMatch(ws(['V', (r.correlation as { matrix: number[][] }).matrix[1][0].toFixed(3), '1', (r.correlation as { matrix: number[][] }).matrix[1][2].toFixed(3)]));
    expect(flat).toContain(r.converged ? 'Converged after' : 'Did not converge');
    expect(flat).not.toContain('Converged. Converged');
    expect(flat).toContain(`): ${fmt(r.objective)}.`);
    for (const p of r.predictions) {
      expect(flat).toContain(p.path);
      if (p.used) expect(flat).toMatch(ws([fmt(p.observed), fmt(p.predicted), fmt(p.residual)]));
    }
  });

  it('states the caution of individual estimates', () => {
    expect(flat).toContain('Individual estimates are model outputs for review by a clinician; not dosing advice.');
  });

  it('prints NCA figures as ncaOfModel computes them, with their rule and flags', () => {
    const model = normaliseScenario(scenario);
    if (!model.ok) throw new Error('bad sample');
    const nca = ncaOfModel(model.value);
    if (!nca.ok) throw new Error(JSON.stringify(nca.problems));
    const f = nca.value.profiles[0].result.figures;
    expect(flat).toMatch(ws(['Cmax', fmt(f.cmax), 'mg/L', 'highest level observed after the dose']));
    expect(flat).toMatch(ws(['AUC0–last', fmt(f.aucLast), 'mg/L·h']));
    expect(flat).toContain('Subject P-017, central');
    for (const flag of nca.value.profiles[0].result.flags) expect(flat).toContain(flag.message.replace(/\s+/g, ' ').slice(0, 40));
  });

  it('has a sane page count, the same in pdfinfo', () => {
    expect(Number(pdfInfo(outcome.bytes).Pages)).toBe(outcome.pages);
    expect(pages.length).toBe(outcome.pages);
    expect(outcome.pages).toBeGreaterThanOrEqual(6);
    expect(outcome.pages).toBeLessThanOrEqual(12);
  });
});

describe('report of regimen proposals', () => {
  const scenario = readSample('orvanix-propose');
  const { outcome, flat } = report(scenario);
  const proposed = proposeRegimens(scenario);
  if (!proposed.ok) throw new Error(JSON.stringify(proposed.problems));
  const result = proposed.value;

  it('draws the section, the count searched and the caution, without NCA or fit', () => {
    expect(flat).toContain('8 Regimen proposals');
    expect(flat).toContain(`= ${result.searched.regimens} regimens searched`);
    expect(flat).toContain(`The best 15 of ${result.proposals.length} are shown.`);
    expect(flat).toContain(PROPOSAL_CAUTION);
    expect(flat).toContain(`Ranking rule: ${result.rankingRule}`);
    expect(flat).not.toContain('Non-compartmental analysis');
    expect(flat).not.toContain('Individual parameters');
  });

  it('prints the first row as proposeRegimens ranks it', () => {
    const p = result.proposals[0];
    const loading = p.loading ? `${fmt(p.loading.amount)} mg` : '—';
    expect(flat).toMatch(ws(['1', fmt(p.amount), fmt(p.interval), p.duration > 0 ? fmt(p.duration) : '—', loading, fmt(p.steadyState?.trough), fmt(p.steadyState?.peak), fmt(p.steadyState?.auc24)]));
    expect(p.rank).toBe(1);
  });

  it('prints fifteen rows at most', () => {
    const last = result.proposals[14];
    expect(flat).toMatch(ws(['15', fmt(last.amount), fmt(last.interval)]));
    expect(flat).not.toMatch(ws(['16', fmt(result.proposals[15].amount), fmt(result.proposals[15].interval)]));
    expect(outcome.pages).toBeLessThanOrEqual(8);
  });
});

describe('report of measured levels alone', () => {
  it('has the NCA section and neither fit nor proposals', () => {
    const { flat, outcome } = report(readSample('orvanix-levels'));
    expect(flat).toContain('8 Non-compartmental analysis of the measured levels');
    expect(flat).toContain('NCA figures describe the levels given; they are not dosing advice.');
    expect(flat).not.toContain('Individual parameters');
    expect(flat).not.toContain('Regimen proposals');
    expect(outcome.pages).toBeLessThanOrEqual(8);
  });
});

describe('a fit the scenario asks for but cannot run', () => {
  it('is refused with its path, as /api/fit would answer', () => {
    const scenario = { ...fitSample(), fit: { estimate: ['CL', 'nothing-of-that-name'], objective: 'map' } };
    const outcome = buildReport({ scenario }, { now });
    expect(outcome.ok).toBe(false);
    if (outcome.ok) return;
    expect(outcome.status).toBe(400);
    expect(outcome.problems.some((p) => p.path.startsWith('fit.estimate[1]'))).toBe(true);
  });
});
