// The report's virtual-population section, read back with pdftotext: the population's
// caution, its settings (checked against the scenario file itself), the exposure percentiles,
// attainment and regimen grid as printed from simulatePopulation's own result (formatted with
// the report's fmt and percent), the best regimen marked, and the cap stated when the
// population is larger than a report runs.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { simulatePopulation, type PopulationResult } from '../../models/population/population.ts';
import { fmt, percent } from '../../server/report/format.ts';
import { ordinal, subjectsWithinCap } from '../../server/report/population.ts';
import { buildReport, type ReportOptions } from '../../server/report/report.ts';
import { escapeRegExp, pdfInfo, pdfPages, readSample, removeTempFiles, squeeze } from './helpers.ts';

const now = new Date(Date.UTC(2031, 4, 17, 9, 30));

/** The demo population with fewer subjects, so that a report takes about a second. */
function demo(subjects: number): Record<string, unknown> {
  const scenario = readSample('halvorin-population-infusion');
  return { ...scenario, population: { ...(scenario.population as Record<string, unknown>), subjects } };
}

function report(scenario: unknown, options: ReportOptions = {}) {
  const outcome = buildReport({ scenario }, { now, ...options });
  if (!outcome.ok) throw new Error(`no report: ${JSON.stringify(outcome.problems)}`);
  const pages = pdfPages(outcome.bytes);
  return { bytes: outcome.bytes, pages, text: squeeze(pages.join('\n')), flat: pages.join('\n').replace(/\s+/g, ' ') };
}

function engine(scenario: unknown, subjects?: number): PopulationResult {
  const r = simulatePopulation(scenario, subjects === undefined ? {} : { subjects });
  if (!r.ok) throw new Error(JSON.stringify(r.problems));
  return r.value;
}

/** The section's own text: from its heading on. */
function section(flat: string): string {
  const at = flat.indexOf('8 Virtual population');
  expect(at).toBeGreaterThan(-1);
  return flat.slice(at);
}

let main: ReturnType<typeof report>;
let result: PopulationResult;

beforeAll(() => {
  const scenario = demo(60);
  main = report(scenario);
  result = engine(scenario);
}, 120_000);
afterAll(removeTempFiles);

describe('the population section', () => {
  it('comes after the typical subject sections, with the population caution boxed first', () => {
    const flat = main.flat;
    expect(flat.indexOf('7 Figures per dosing interval')).toBeLessThan(flat.indexOf('8 Virtual population'));
    const own = section(flat);
    // The engine's caution, word for word, before any setting or figure of the section.
    expect(result.caution).toContain('not a patient');
    expect(result.caution).toContain('not dosing advice');
    expect(result.caution).toContain('local protocols');
    const caution = own.indexOf(result.caution);
    expect(caution).toBeGreaterThan(-1);
    expect(caution).toBeLessThan(own.indexOf('Settings'));
    expect(own.indexOf('Caution — virtual population')).toBeLessThan(caution);
    // The document's subject names the population too.
    expect(pdfInfo(main.bytes).Subject).toContain('virtual population of 60 subjects');
  });

  it('states the settings as the scenario gives them', () => {
    const own = section(main.flat);
    expect(own).toContain('Virtual subjects N 60 Seed 20261202');
    // The covariate words are the engine's; each is printed.
    for (const c of result.settings.covariates) expect(own).toContain(c);
    // cv and kind from the scenario file: V1 "20%", CL "30%", neither says `variation`, so log-normal (the schema's default).
    expect(own).toContain('V1 (compartments[0].volume): cv 20%, log-normal');
    expect(own).toContain('CL (transfers[0].cl): cv 30%, log-normal');
    expect(own).toContain('Correlations CL–V1 0.3');
    expect(own).toContain('Residual error additive 0.5 mg/L, proportional 10%');
    expect(own).toContain('Percentiles 5th, 50th, 95th');
  });

  it('draws one band figure per compartment with a volume, with units', () => {
    const own = section(main.flat);
    expect(Object.keys(result.bands)).toEqual(['central', 'tissue']);
    expect(own).toContain('central (Plasma) — concentration (mg/L)');
    expect(own).toContain('tissue (Tissue) — concentration (mg/L)');
    expect(own).toContain('time (h)');
    expect(own).toContain('Figure 3. Concentration bands of 60 virtual subjects');
    expect(own).toContain('5th–95th percentile of the model population');
  });

  it("prints the exposure percentiles of every period as the engine's", () => {
    const text = main.text;
    expect(result.headlinePeriod).toBe('steady state');
    expect(text).toContain('Exposure, steady state (headline period)');
    for (const period of result.periods) {
      for (const [id, figures] of Object.entries(period.compartments)) {
        const cmax = figures.cmax;
        const row = `Cmax (mg/L) ${['5', '50', '95'].map((k) => fmt(cmax.percentiles[k])).join(' ')} ${fmt(cmax.mean)} ${cmax.subjects}`;
        expect(text, `${period.period}, ${id}`).toContain(row);
        const auc = figures.auc;
        expect(text, `${period.period}, ${id}`).toContain(`AUC over the interval (mg/L·h) ${['5', '50', '95'].map((k) => fmt(auc.percentiles[k])).join(' ')} ${fmt(auc.mean)} ${auc.subjects}`);
      }
    }
  });

  it("prints each target's probability, standard error and counts as simulatePopulation gives them", () => {
    const own = section(main.text.replace(/\s+/g, ' '));
    expect(result.attainment).toHaveLength(3);
    for (const a of result.attainment) {
      // The binomial standard error √(p(1 − p)/N) from the counts (Monte Carlo, textbook).
      expect(a.probability).toBeCloseTo(a.attained / a.subjects, 14);
      expect(a.standardError).toBeCloseTo(Math.sqrt((a.probability * (1 - a.probability)) / a.subjects), 14);
      expect(own).toContain(a.target.split(' at ')[0]);
      expect(own, a.target).toMatch(new RegExp(`${escapeRegExp(percent(a.probability))} ${escapeRegExp(percent(a.standardError))} ${a.attained} / ${a.subjects} ${a.undetermined}`));
    }
  });

  it('marks the best regimen under the stated rule, and prints every row', () => {
    const own = section(main.flat);
    const grid = result.regimens;
    expect(grid).not.toBeNull();
    if (!grid) return;
    expect(grid.rows).toHaveLength(8);
    expect(grid.best).not.toBeNull();
    const best = grid.rows[grid.best as number];
    // The mark sits under the regimen in its cell: read back after the row's figures, and on that row alone.
    const bestCells = [...best.attainment.map((a) => percent(a.probability)), best.joint ? `${percent(best.joint.probability)} ± ${(100 * best.joint.standardError).toFixed(1)}` : '—', `${percent(best.ceiling.probability)} ± ${(100 * best.ceiling.standardError).toFixed(1)}`];
    expect(own).toContain(`${best.regimen} ${bestCells.join(' ')} best under the rule`);
    expect(own.split(/\d best under the rule/)).toHaveLength(2);
    expect(own).toContain(`The rule: ${grid.rule}.`);
    expect(own).toContain(`Best under the rule: ${best.regimen}.`);
    for (const row of grid.rows) {
      const cells = [...row.attainment.map((a) => percent(a.probability)), row.joint ? `${percent(row.joint.probability)} ± ${(100 * row.joint.standardError).toFixed(1)}` : '—'];
      expect(own, row.regimen).toContain(cells.join(' '));
    }
  });

  it('says when there is no population warning', () => {
    expect(result.diagnostics.warnings).toEqual([]);
    expect(section(main.flat)).toContain('Population warnings None');
  });
});

describe('the cap', () => {
  it('holds the subjects to both limits (worked by hand)', () => {
    // 100 000 × 385 × 2 = 77 000 000 > 5 000 000 → ⌊5 000 000 / 770⌋ = 6493; 8 × 100 000 > 20 000 → ⌊20 000 / 8⌋ = 2500.
    const size = subjectsWithinCap(100_000, 385, 2, 8, { gridValues: 5_000_000, regimenRuns: 20_000 });
    expect(size.used).toBe(2500);
    expect(size.reasons).toHaveLength(2);
    expect(subjectsWithinCap(1000, 385, 2, 8, { gridValues: 5_000_000, regimenRuns: 20_000 })).toEqual({ requested: 1000, used: 1000, reasons: [] });
    expect(subjectsWithinCap(10, 385, 2, 0, { gridValues: 7700, regimenRuns: 1 }).used).toBe(10);
    expect(subjectsWithinCap(11, 385, 2, 0, { gridValues: 7700, regimenRuns: 1 }).used).toBe(10);
  });

  it('runs fewer subjects and says so, with the number used, when the regimen grid is too large', () => {
    // 8 regimens × 60 subjects = 480 regimen runs over a limit of 200: ⌊200 / 8⌋ = 25 subjects.
    const capped = report(demo(60), { populationCap: { regimenRuns: 200 } });
    const own = section(capped.flat);
    expect(own).toContain("8 regimens × 60 subjects make 480 regimen runs, more than this report's limit of 200");
    expect(own).toContain('this section runs 25 of the 60 subjects requested');
    expect(own).toContain('Virtual subjects N 25 used of 60 requested');
    expect(own).toContain('Concentration bands of 25 virtual subjects');
    // The figures are those of the first 25 subjects of the same seed.
    const small = engine(demo(60), 25);
    for (const a of small.attainment) expect(own).toContain(`${percent(a.probability)} ${percent(a.standardError)} ${a.attained} / 25 ${a.undetermined}`);
  });

  it('caps by the concentrations kept for the bands', () => {
    // 385 output times (0 to 96 h every 15 min) × 2 compartments = 770 per subject; a limit of 7700 holds 10.
    const capped = report(demo(12), { populationCap: { gridValues: 7700 } });
    const own = section(capped.flat);
    expect(own).toContain("12 subjects × 385 output times × 2 compartments with a volume make 9 240 concentrations, more than this report's limit of 7 700");
    expect(own).toContain('this section runs 10 of the 12 subjects requested');
  });
});

describe('without a population, or with a wrong one', () => {
  it('adds no population section to a scenario without one', () => {
    const plain = report(readSample('brennock-oral-bid'));
    expect(plain.flat).not.toContain('Virtual population');
  });

  it('answers the population problem with its JSON path, not a PDF', () => {
    const scenario = demo(20);
    const population = scenario.population as Record<string, unknown>;
    const wrong = { ...scenario, population: { ...population, correlations: [{ between: ['CL', 'Vnone'], value: 0.3 }] } };
    const outcome = buildReport({ scenario: wrong }, { now });
    expect(outcome.ok).toBe(false);
    if (outcome.ok) return;
    expect(outcome.status).toBe(400);
    expect(outcome.problems.map((p) => p.path)).toContain('population.correlations[0].between[1]');
  });

  it('writes percentiles as ordinals', () => {
    expect(['1', '2', '3', '5', '11', '12', '13', '21', '50', '2.5', '97.5'].map(ordinal)).toEqual(['1st', '2nd', '3rd', '5th', '11th', '12th', '13th', '21st', '50th', '2.5th', '97.5th']);
  });
});

describe('a regimen grid with ceiling targets only', () => {
  it('prints no joint share (—) and the rule that ranks by the ceilings, without failing', () => {
    const scenario = demo(30) as { population: Record<string, unknown> };
    scenario.population = { ...scenario.population, targets: [{ peak: { atMost: '60 mg/L' } }] };
    const r = engine(scenario);
    expect(r.regimens?.rows.every((row) => row.joint === null)).toBe(true);
    const own = section(report(scenario).flat);
    const first = r.regimens?.rows[0];
    if (!first) throw new Error('no regimen grid');
    expect(own).toContain(`${first.regimen} ${percent(first.attainment[0].probability)} — ${percent(first.ceiling.probability)}`);
    expect(own).toContain(`The rule: ${r.regimens?.rule}.`);
  }, 120_000);
});
