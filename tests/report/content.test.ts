// What the report says, read back with pdftotext: the caution on page 1 before any figure
// and in every footer, the engine's own numbers (formatted with the same fmt the report
// uses), the symbols µ, τ and ½, the reference overlay, and no PDF for a bad scenario.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { scenarioFingerprint } from '../../models/scenario/fingerprint.ts';
import { simulate, type SimulationResult } from '../../models/simulate.ts';
import { fmt } from '../../models/result/summary-text.ts';
import { buildReport } from '../../server/report/report.ts';
import { escapeRegExp, failing, pdfInfo, pdfPages, readSample, removeTempFiles } from './helpers.ts';

const now = new Date(Date.UTC(2031, 4, 17, 9, 30));
const brennock = readSample('brennock-oral-bid');

function report(scenario: unknown, reference?: unknown): { bytes: Uint8Array; pages: string[]; fingerprint: string } {
  const outcome = buildReport(reference === undefined ? { scenario } : { scenario, reference }, { now });
  if (!outcome.ok) throw new Error(`no report: ${JSON.stringify(outcome.problems)}`);
  return { bytes: outcome.bytes, pages: pdfPages(outcome.bytes), fingerprint: outcome.fingerprint };
}

function engine(scenario: unknown): SimulationResult {
  const r = simulate(scenario);
  if (!r.ok) throw new Error(JSON.stringify(r.problems));
  return r.value;
}

/** Page text with all white space collapsed, so wrapped sentences can be found whole. */
const flat = (text: string) => text.replace(/\s+/g, ' ');
const pct = (f: number) => `${fmt(100 * f, 3)}%`;

let main: ReturnType<typeof report>;
let all: string;

beforeAll(() => {
  main = report(brennock);
  all = main.pages.join('\n');
}, 120_000);
afterAll(removeTempFiles);

describe('the caution', () => {
  it('is boxed on page 1, in plain words, before the model section and its figure', () => {
    const first = flat(main.pages[0]);
    const caution = first.indexOf('Caution');
    expect(caution).toBeGreaterThan(-1);
    for (const phrase of [
      'model simulation, produced for review. It is not dosing advice.',
      'only as good as the model and the parameters that were entered',
      'Dosing decisions belong to qualified clinicians, working under local protocols, the product labelling and applicable regulations.',
    ]) {
      const at = first.indexOf(phrase);
      expect(at, phrase).toBeGreaterThan(caution);
      expect(at, phrase).toBeLessThan(first.indexOf('1 Model'));
    }
    expect(first.indexOf('1 Model')).toBeLessThan(first.indexOf('Figure 1.'));
  });

  it('is in the footer of every page, with "page N of M"', () => {
    const count = main.pages.length;
    expect(count).toBeGreaterThanOrEqual(2);
    expect(Number(pdfInfo(main.bytes).Pages)).toBe(count);
    main.pages.forEach((page, i) => {
      expect(page).toContain('Model simulation for review — not dosing advice.');
      expect(page).toContain(`page ${i + 1} of ${count}`);
    });
  });
});

describe('the header', () => {
  it('names the scenario, the run time, the version and the fingerprint', () => {
    const first = flat(main.pages[0]);
    expect(first).toContain('Brennock 400 mg by mouth twice daily');
    expect(first).toContain('Run 2031-05-17 09:30 UTC');
    expect(first).toContain('Tidemark version Tidemark 0.1.0');
    expect(main.fingerprint).toBe(scenarioFingerprint(brennock));
    expect(first).toContain(`Scenario fingerprint ${main.fingerprint}`);
    // Later pages carry the fingerprint in the running header.
    for (const page of main.pages.slice(1)) expect(page).toContain(`fingerprint ${main.fingerprint}`);
  });
});

describe("numbers equal the engine's", () => {
  const r = engine(brennock);
  const central = r.metrics.compartments.find((c) => c.compartment === 'central');
  const ss = r.metrics.steadyState?.compartments.find((c) => c.compartment === 'central');
  if (!central || !ss) throw new Error('brennock must have central figures and a steady state');

  it('parameters and derived quantities', () => {
    const text = flat(all);
    // k = CL/V = 4.2/42; the half-lives from the engine's eigenvalues.
    expect(text).toContain(`${fmt(4.2 / 42)} 1/h`);
    const d = r.diagnostics.disposition;
    for (const hl of d.halfLives) expect(text).toContain(`t½ ${fmt(hl)} h`);
    expect(text).toContain(`Terminal half-life ${fmt(d.terminalHalfLife)} h`);
    expect(text).toContain('Volume at steady state Vss 42 L');
    expect(text).toContain('400 mg into gut every 12 h × 14 from 0 h, F 0.85, lag 20 min');
  });

  it('exposure over the span, in the target window and at steady state', () => {
    const text = flat(all);
    const o = central.overall;
    expect(text).toMatch(new RegExp(`central ${escapeRegExp(fmt(o.cmax))} ${escapeRegExp(fmt(o.tmax))} ${escapeRegExp(fmt(o.auc))} ${escapeRegExp(fmt(o.cEnd))} 14`));
    const w = o.windows[0];
    expect(text).toContain(`whole span ${fmt(w.timeInWindow)} ${fmt(w.timeUnderWindow)} ${fmt(w.timeOverWindow)} ${pct(w.fractionInWindow)}`);
    for (const [name, value] of [
      ['Cmax,ss (mg/L)', ss.cmax],
      ['Trough (mg/L)', ss.trough],
      ['Cavg (mg/L)', ss.cavg],
      ['AUCτ (mg/L·h)', ss.auc],
      ['Accumulation AUCτ,ss / AUC of the first cycle', ss.accumulationRatio],
    ] as const) {
      expect(text).toContain(`${name} ${fmt(value)}`);
    }
  });

  it("one row per dosing interval with the engine's figures", () => {
    expect(central.intervals).toHaveLength(14);
    for (const iv of central.intervals) {
      const cells = [iv.index + 1, iv.start, iv.end, iv.cmax, iv.tmax, iv.trough, iv.auc, iv.cavg, iv.fluctuation === null ? null : 100 * iv.fluctuation].map((v) => escapeRegExp(fmt(v)));
      const row = new RegExp(`^\\s*${cells.join('\\s+')}\\s+${escapeRegExp(pct(iv.windows[0].fractionInWindow))}\\s*$`, 'm');
      expect(all, `interval ${iv.index + 1}`).toMatch(row);
    }
  });

  it('the method, its counts and the independent check', () => {
    const text = flat(all);
    expect(text).toContain('exact solution: matrix exponential');
    expect(text).toContain(`${r.diagnostics.propagators} matrix exponentials over ${r.diagnostics.segments} pieces`);
    expect(text).toContain('method "dop853", rtol 1e-10, atol 1e-12');
    const m = /Largest difference (\S+) mg\/L in concentration over all (\d+) reported times/.exec(text);
    expect(m).not.toBeNull();
    expect(Number(m?.[2])).toBe(r.times.length);
    // The exact path against DOP853 at rtol 1e-10: differences of order 1e-10 × 9 mg/L; 1e-6 mg/L is a generous bound.
    expect(Number(m?.[1])).toBeLessThan(1e-6);
    expect(text).toMatch(/Relative to Cmax \S+ \(largest over compartments/);
  });

  it('warnings: none for this scenario, stated as such', () => {
    expect(r.diagnostics.warnings).toEqual([]);
    expect(flat(all)).toContain('5 Warnings None.');
  });
});

describe('symbols', () => {
  it('prints µ (micro sign), τ and ½ as text that extracts back', () => {
    const micro = { ...structuredClone(brennock), title: 'Brennock in micrograms', units: { amount: 'ug', volume: 'L', time: 'h' } };
    const { pages } = report(micro);
    const text = flat(pages.join('\n'));
    expect(text).toContain('\u00b5g/L');
    expect(text).toContain('concentration (\u00b5g/L)');
    expect(text).toContain('\u03c4 = 12 h');
    expect(text).toContain('AUC\u03c4');
    expect(text).toContain('t\u00bd');
    // 400 mg is 400000 µg, printed by fmt.
    expect(text).toContain(`${fmt(400000)} \u00b5g into gut every 12 h`);
  });
});

describe('a reference scenario', () => {
  it('is overlaid dashed with a legend, identified in the header and compared', () => {
    const higher = { ...structuredClone(brennock), title: 'Brennock 600 mg by mouth twice daily', doses: [{ ...(brennock.doses as object[])[0], amount: '600 mg' }] };
    const { pages } = report(brennock, higher);
    const text = flat(pages.join('\n'));
    expect(text).toContain('central — this scenario');
    expect(text).toContain('central — reference (dashed)');
    expect(text).toContain(`Reference scenario Brennock 600 mg by mouth twice daily — fingerprint ${scenarioFingerprint(higher)}`);
    const a = engine(brennock).metrics.compartments.find((c) => c.compartment === 'central');
    const b = engine(higher).metrics.compartments.find((c) => c.compartment === 'central');
    if (!a || !b) throw new Error('central figures expected');
    expect(text).toContain(`central Cmax ${fmt(a.overall.cmax)} ${fmt(b.overall.cmax)} ${fmt(a.overall.cmax / b.overall.cmax, 3)}`);
  });
});

describe('no PDF for a scenario that cannot be simulated', () => {
  it('answers the same 400 problems as the engine for an invalid scenario', () => {
    const bad = { ...brennock, doses: [{ into: 'tisue', amount: '100 mg' }] };
    const outcome = buildReport({ scenario: bad });
    const direct = simulate(bad);
    if (direct.ok) throw new Error('must be invalid');
    expect(outcome).toEqual({ ok: false, status: 400, problems: direct.problems });
  });

  it('names a problem of the reference under "reference."', () => {
    const outcome = buildReport({ scenario: brennock, reference: { ...brennock, output: {} } });
    expect(outcome.ok).toBe(false);
    if (outcome.ok) return;
    expect(outcome.status).toBe(400);
    expect(outcome.problems[0].path).toMatch(/^reference\.output/);
  });

  it('answers 422 with the engine message on numerical failure', () => {
    const outcome = buildReport({ scenario: failing });
    expect(outcome.ok).toBe(false);
    if (outcome.ok) return;
    expect(outcome.status).toBe(422);
    expect(outcome.problems[0].message).toMatch(/numerical failure/);
  });
});
