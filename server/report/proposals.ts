/**
 * The report's regimen proposals, drawn when the scenario has a `propose` block:
 * proposeRegimens (models/regimen/propose.ts) run in the report's thread, the best fifteen
 * of the ranked table with how many regimens were searched, the targets, the ranking rule,
 * the meaning of the time to the window, and the caution that proposals are model outputs
 * for a clinician's review.
 */
import { PROPOSAL_CAUTION, proposeRegimens, type Proposal, type ProposeResult } from '../../models/regimen/propose.ts';
import type { Outcome } from '../../models/scenario/problems.ts';
import { bullet, drawSectionCaution } from './section-text.ts';
import { ensureSpace, font, heading, palette, paragraph, type } from './document.ts';
import { fmt, unitText } from './format.ts';
import { drawTable, type Cell } from './table.ts';

/** Rows the report prints; the command line and the API give all. */
export const REPORT_PROPOSALS = 15;

export function runReportProposals(scenario: unknown, hasPropose: boolean): Outcome<ProposeResult> | null {
  return hasPropose ? proposeRegimens(scenario) : null;
}

function loading(p: Proposal, amount: string): string {
  if (!p.loading) return '—';
  return `${fmt(p.loading.amount)} ${unitText(amount)}${p.loading.firstTroughMet ? '' : '\n(first trough missed)'}`;
}

function met(p: Proposal): Cell {
  const n = p.targetsMet.filter(Boolean).length;
  return { text: `${p.targetsMet.map((m, i) => `${i + 1}${m ? '✓' : '✗'}`).join(' ')}`, bold: p.allMet, ...(n < p.targetsMet.length ? { color: palette.warning } : {}) };
}

function toWindow(p: Proposal, unit: string): string {
  if (!p.allMet) return '—';
  const plain = p.timeToWindow === null ? 'not reached' : `${fmt(p.timeToWindow)} ${unit}`;
  return p.loading ? `${plain}\n${p.loading.timeToWindow === null ? 'not reached' : `${fmt(p.loading.timeToWindow)} ${unit}`} loaded` : plain;
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
  drawSectionCaution(doc, 'Caution — regimen proposals', [r.caution]);
  const u = r.units;
  const s = r.searched;
  const shown = r.proposals.slice(0, REPORT_PROPOSALS);
  paragraph(
    doc,
    `${s.amounts} amounts × ${s.intervals} intervals × ${s.durations} infusion durations = ${s.regimens} regimens searched, each solved to steady state on the scenario's model (${s.method}; ${s.steadyStateSolves} steady-state solves, ${s.intervalsSimulated} dosing intervals simulated from empty). ${shown.length < r.proposals.length ? `The best ${shown.length} of ${r.proposals.length} are shown.` : `All ${r.proposals.length} are shown.`}`,
    { size: type.small },
  );
  // The targets stay with the table's first rows.
  ensureSpace(doc, 14 * r.targets.length + 150);
  paragraph(doc, 'Targets (numbered as in the table)', { size: type.small, face: font.bold, after: 1 });
  r.targets.forEach((t, i) => paragraph(doc, `${i + 1}. ${unitText(t)}`, { size: type.small, indent: 6, after: 1 }));
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
    footnote: `Trough, peak and AUC24 at steady state in the compartment of the first target. ✓/✗: each target met or missed, numbered as listed above. Time to the window: ${r.timeToWindowDefinition.replace(/\bnull\b/, '"not reached"')}; "loaded" with the loading dose first; — when the steady state misses a target (the window is never reached).`,
  });
  const notes = shown.filter((p) => p.note !== null);
  for (const p of notes) bullet(doc, `Rank ${p.rank}: ${p.note}`, palette.warning);
  paragraph(doc, `Ranking rule: ${r.rankingRule}.`, { size: type.small, color: palette.muted });
}

