/**
 * The report's regimen proposals, drawn when the scenario has a `propose` block:
 * proposeByBasis (models/regimen/propose-basis.ts) run in the report's thread, the best fifteen
 * of the ranked table with how many regimens were searched, the targets, the ranking rule,
 * the meaning of the time to the window, and the caution that proposals are model outputs
 * for a clinician's review. For propose.basis "population" the table holds the attainment
 * (joint and per target, with standard errors), the trough and peak percentiles, the time to the
 * window over every subject and the first interval without and with the loading dose, then a
 * table of the share meeting every target in each of the first intervals from empty, under the
 * caution that population figures describe a model population, not a patient.
 */
import { proposeByBasis } from '../../models/regimen/propose-basis.ts';
import type { PopulationProposalLimits } from '../../models/regimen/population-proposals.ts';
import { PROPOSAL_CAUTION, type Proposal, type ProposeResult } from '../../models/regimen/propose.ts';
import { simulatedLoading } from '../../models/regimen/proposal-words.ts';
import type { Outcome } from '../../models/scenario/problems.ts';
import { bullet, drawSectionCaution } from './section-text.ts';
import { ensureSpace, font, heading, palette, paragraph, type } from './document.ts';
import { fmt, unitText } from './format.ts';
import { drawTable, type Cell } from './table.ts';
import { defaultPopulationLimits } from '../population-jobs.ts';
import { reportPopulationCap } from './population.ts';

/** Rows the report prints; the command line and the API give all. */
export const REPORT_PROPOSALS = 15;

/** Population proposals in a report: the server's subjects, and the report's own cap on regimen runs (as its population section). */
export const reportProposalLimits: PopulationProposalLimits = { subjects: defaultPopulationLimits.maxSubjects, runs: reportPopulationCap.regimenRuns };

export function runReportProposals(scenario: unknown, hasPropose: boolean, limits: PopulationProposalLimits = reportProposalLimits): Outcome<ProposeResult> | null {
  return hasPropose ? proposeByBasis(scenario, limits) : null;
}

/** A share of subjects as "83.4% ± 1.7". */
function percentCell(x: { probability: number; standardError: number }): string {
  return `${fmt(Number((x.probability * 100).toFixed(1)))}% ± ${fmt(Number((x.standardError * 100).toFixed(1)))}`;
}

function spreadCell(x: { p5: number; p50: number; p95: number }): string {
  return Number.isNaN(x.p50) ? '—' : `${fmt(x.p50)}\n${fmt(x.p5)}–${fmt(x.p95)}`;
}

/** Median over 5th–95th of the time to the window; "n.r." where a percentile falls among subjects who never reach it. */
function timeCell(t: { p5: number | null; p50: number | null; p95: number | null }): string {
  const v = (x: number | null) => (x === null ? 'n.r.' : fmt(x));
  return `${v(t.p50)}\n${v(t.p5)}–${v(t.p95)}`;
}

/** The first interval from empty: every target met without, and with the loading dose. */
function firstIntervalCell(p: Proposal, amount: string): string {
  const f = (p.population as NonNullable<Proposal['population']>).approach.firstInterval;
  const note = p.loading?.note ? `\n(${p.loading.note})` : '';
  const loaded = f.withLoading && p.loading ? `\n${percentCell(f.withLoading)} after ${fmt(p.loading.amount)} ${unitText(amount)}${note}` : '';
  return `${percentCell(f.without)}${loaded}`;
}

/** Why subjects never reach the window, in words. */
function neverCell(n: { steadyStateMisses: number; noSteadyState: number; onlyAtSteadyState: number; failed: number }): string {
  const parts = [
    n.steadyStateMisses > 0 ? `${n.steadyStateMisses} steady state misses` : null,
    n.noSteadyState > 0 ? `${n.noSteadyState} no steady state` : null,
    n.onlyAtSteadyState > 0 ? `${n.onlyAtSteadyState} only at steady state` : null,
    n.failed > 0 ? `${n.failed} run failed` : null,
  ].filter((x): x is string => x !== null);
  return parts.length > 0 ? parts.join('\n') : '—';
}

/** The share meeting every target in each of the first intervals from empty, and who reaches the window. */
function drawApproachTable(doc: PDFKit.PDFDocument, r: ProposeResult, shown: Proposal[]): void {
  const basis = r.population as NonNullable<ProposeResult['population']>;
  const k = shown[0]?.population?.approach.byInterval.length ?? 0;
  drawTable(doc, {
    caption: 'From the first dose: time to the window, the first interval with and without the loading dose, the first intervals',
    columns: [
      { header: 'Rank', width: 0.45, align: 'right' },
      { header: 'Regimen', width: 1.2 },
      { header: `To window (${r.units.time})\nmedian, 5–95th`, width: 1.1, align: 'right' },
      { header: 'Interval 1\n(% ± SE)', width: 1.4, align: 'right' },
      { header: `Intervals 1–${k}\n(% all targets)`, width: 1.35 },
      { header: 'Reach the\nwindow', width: 0.65, align: 'right' },
      { header: 'Never, because', width: 1.25 },
    ],
    size: type.tiny + 0.3,
    zebra: true,
    rows: shown.map((p) => {
      const a = (p.population as NonNullable<Proposal['population']>).approach;
      return [
        { text: String(p.rank), bold: p.rank === 1 },
        `${fmt(p.amount)} ${unitText(r.units.amount)} every ${fmt(p.interval)} ${r.units.time}`,
        timeCell(a.timeToWindow),
        firstIntervalCell(p, r.units.amount),
        a.byInterval.map((x) => fmt(Math.round(x.probability * 100))).join(' · '),
        `${a.reached} of ${basis.subjects}`,
        neverCell(a.neverReached),
      ];
    }),
    footnote: `Each regimen given to every subject from empty. To window: median and 5th–95th percentile over every subject, "n.r." where the percentile falls among those who never reach the window. Interval 1: the share meeting every target in the first dosing interval, without${basis.loading ? ' and with' : ''} the loading dose${basis.loading ? ' (the typical subject\'s, the same for all)' : ' (none asked for)'}. Intervals 1–${k}: the share meeting every target in each, without a loading dose (a share of N = ${basis.subjects} has a Monte Carlo standard error of at most 100·√(0.25/N) = ${fmt(Number((100 * Math.sqrt(0.25 / basis.subjects)).toFixed(1)))} points). Time to the window: ${basis.timeToWindow}.${basis.loading ? ` Loading dose: ${basis.loading}.` : ''}`,
  });
}

/** The population's table: joint and per-target attainment with standard errors, trough and peak percentiles. */
function drawPopulationTable(doc: PDFKit.PDFDocument, r: ProposeResult, shown: Proposal[]): void {
  const u = r.units;
  const basis = r.population as NonNullable<ProposeResult['population']>;
  const c = unitText(u.concentration);
  drawTable(doc, {
    caption: `Ranked proposals for ${basis.subjects} virtual subjects (seed ${basis.seed}) at steady state and from the first dose`,
    columns: [
      { header: 'Rank', width: 0.45, align: 'right' },
      { header: 'Tier', width: 0.4, align: 'right' },
      { header: `Amount (${unitText(u.amount)})`, width: 0.75, align: 'right' },
      { header: `Every (${u.time})`, width: 0.6, align: 'right' },
      { header: `Infusion (${u.time})`, width: 0.7, align: 'right' },
      { header: 'All targets\n(% ± SE)', width: 1.0, align: 'right' },
      { header: 'Each target\n(% ± SE)', width: 1.25 },
      { header: `Trough (${c})\nmedian, 5–95th`, width: 1.05, align: 'right' },
      { header: `Peak (${c})\nmedian, 5–95th`, width: 1.05, align: 'right' },
    ],
    size: type.tiny + 0.3,
    zebra: true,
    rows: shown.map((p) => {
      const a = p.population as NonNullable<Proposal['population']>;
      return [
        { text: String(p.rank), bold: p.rank === 1 },
        String(a.tier),
        { text: fmt(p.amount), bold: p.rank === 1 },
        { text: fmt(p.interval), bold: p.rank === 1 },
        p.duration > 0 ? fmt(p.duration) : '—',
        { text: percentCell(a.joint), bold: p.rank === 1 },
        a.targets.map((t, k) => `${k + 1}: ${percentCell(t)}`).join('\n'),
        spreadCell(a.trough),
        spreadCell(a.peak),
      ];
    }),
    footnote: `All targets: the share of the ${basis.subjects} subjects whose steady state meets every target at once; each target: its own share; ± one Monte Carlo standard error √(p(1 − p)/N). Every regimen is given to the same subjects (common random numbers). Trough and peak in the compartment of the first target; ${basis.percentileRule}. The time to the window and the first intervals from empty follow in the next table.`,
  });
}

function loading(p: Proposal, amount: string): string {
  const l = simulatedLoading(p);
  if (!l) return '—';
  // The targets its first interval misses, by number; the row's note under the table says by how much.
  const missed = l.firstIntervalTargetsMet.flatMap((m, k) => (m ? [] : [`${k + 1}✗`]));
  const lowered = l.loweredFrom !== null ? `\n(lowered from ${fmt(l.loweredFrom)})` : '';
  return `${fmt(l.amount)} ${unitText(amount)}${lowered}${missed.length > 0 ? `\n(interval 1: ${missed.join(' ')})` : ''}${l.note ? `\n(${l.note})` : ''}`;
}

function met(p: Proposal): Cell {
  const n = p.targetsMet.filter(Boolean).length;
  return { text: `${p.targetsMet.map((m, i) => `${i + 1}${m ? '✓' : '✗'}`).join(' ')}`, bold: p.allMet, ...(n < p.targetsMet.length ? { color: palette.warning } : {}) };
}

function toWindow(p: Proposal, unit: string): string {
  if (!p.allMet) return '—';
  const plain = p.timeToWindow === null ? 'not reached' : `${fmt(p.timeToWindow)} ${unit}`;
  const l = simulatedLoading(p);
  return l ? `${plain}\n${l.timeToWindow === null ? 'not reached' : `${fmt(l.timeToWindow)} ${unit}`} loaded` : plain;
}

/** Draws the section; `number` is its section number. */
export function drawProposalsSection(doc: PDFKit.PDFDocument, outcome: Outcome<ProposeResult>, number: string): void {
  const title = `${number}  Regimen proposals`;
  heading(doc, title, 1, 160);
  doc.outline.addItem(title);
  if (!outcome.ok) {
    drawSectionCaution(doc, 'Caution — regimen proposals', [PROPOSAL_CAUTION]);
    paragraph(doc, 'The proposals could not be computed:', { color: palette.warning });
    for (const p of outcome.problems) bullet(doc, `${p.path}: ${p.message}`, palette.warning);
    return;
  }
  const r = outcome.value;
  drawSectionCaution(doc, 'Caution — regimen proposals', r.population ? [r.population.caution, r.caution] : [r.caution]);
  const u = r.units;
  const s = r.searched;
  const shown = r.proposals.slice(0, REPORT_PROPOSALS);
  const searchedWords = r.population
    ? `${s.amounts} amounts × ${s.intervals} intervals × ${s.durations} infusion durations = ${s.regimens} regimens searched, each given to the same ${r.population.subjects} virtual subjects of the scenario's population, solved to steady state for each (${s.steadyStateSolves} steady states) and run from the first dose (${s.intervalsSimulated} dosing intervals simulated from empty).`
    : `${s.amounts} amounts × ${s.intervals} intervals × ${s.durations} infusion durations = ${s.regimens} regimens searched, each solved to steady state on the scenario's model (${s.method}; ${s.steadyStateSolves} steady-state solves, ${s.intervalsSimulated} dosing intervals simulated from empty).`;
  paragraph(doc, `${searchedWords} ${shown.length < r.proposals.length ? `The best ${shown.length} of ${r.proposals.length} are shown.` : `All ${r.proposals.length} are shown.`}`, { size: type.small });
  // The targets stay with the table's first rows.
  ensureSpace(doc, 14 * r.targets.length + 150);
  paragraph(doc, 'Targets (numbered as in the table)', { size: type.small, face: font.bold, after: 1 });
  r.targets.forEach((t, i) => paragraph(doc, `${i + 1}. ${unitText(t)}`, { size: type.small, indent: 6, after: 1 }));
  if (r.population) {
    drawPopulationTable(doc, r, shown);
    for (const p of shown.filter((x) => x.note !== null)) bullet(doc, `Rank ${p.rank}: ${p.note}`, palette.warning);
    drawApproachTable(doc, r, shown);
    paragraph(doc, `Ranking rule: ${r.rankingRule}.`, { size: type.small, color: palette.muted });
    return;
  }
  const c = unitText(u.concentration);
  drawTable(doc, {
    caption: 'Ranked proposals at steady state',
    columns: [
      { header: 'Rank', width: 0.45, align: 'right' },
      { header: `Amount (${unitText(u.amount)})`, width: 0.75, align: 'right' },
      { header: `Every (${u.time})`, width: 0.6, align: 'right' },
      { header: `Infusion (${u.time})`, width: 0.7, align: 'right' },
      { header: 'Loading dose', width: 0.95, align: 'right' },
      { header: `Trough (${c})`, width: 0.75, align: 'right' },
      { header: `Peak (${c})`, width: 0.7, align: 'right' },
      { header: `AUC24\n(${unitText(u.auc)})`, width: 0.9, align: 'right' },
      { header: 'Targets met', width: 0.85 },
      { header: 'Time to the window', width: 0.85, align: 'right' },
    ],
    size: type.tiny + 0.3,
    zebra: true,
    rows: shown.map((p) => [
      { text: String(p.rank), bold: p.rank === 1 },
      { text: fmt(p.amount), bold: p.rank === 1 },
      { text: fmt(p.interval), bold: p.rank === 1 },
      p.duration > 0 ? fmt(p.duration) : '—',
      loading(p, u.amount),
      fmt(p.steadyState?.trough),
      fmt(p.steadyState?.peak),
      fmt(p.steadyState?.auc24),
      met(p),
      toWindow(p, u.time),
    ]),
    footnote: `Trough, peak and AUC24 at steady state in the compartment of the first target. ✓/✗: each target met or missed, numbered as listed above. Time to the window: ${r.timeToWindowDefinition.replace(/\bnull\b/, '"not reached"')}; "loaded" with the loading dose first; — when the steady state misses a target (the window is never reached). Loading dose "interval 1: 2✗": a target its own first interval misses (a ceiling it breaks, a trough it falls short of), with the figure in the row's note below; "lowered from": the amount aimed at the steady-state trough would break an upper bound in its own first interval, so the largest smaller sum of strengths that keeps them is given (the note says which bound).`,
  });
  const notes = shown.filter((p) => p.note !== null);
  for (const p of notes) bullet(doc, `Rank ${p.rank}: ${p.note}`, palette.warning);
  paragraph(doc, `Ranking rule: ${r.rankingRule}.`, { size: type.small, color: palette.muted });
}

