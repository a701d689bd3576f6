/**
 * Regimen proposals on the page: the caution, the targets in words, and the ranked table
 * (amount, interval, infusion duration, loading dose, steady-state trough, peak and AUC per
 * 24 h, each target met or not, time to the window), each row with "Try in compare". The first
 * rows are shown; the rest on request. Proposals are model outputs, not recommendations.
 * For a population (result.population) the columns are the attainment instead: the tier, the
 * share meeting every target and each target's share with their standard errors, the median
 * and 5th–95th percentiles of the steady-state trough and peak, and on a line under each row
 * the approach from the first dose (time to the window, the first interval without and with
 * the loading dose, the first intervals), under the population's caution.
 */
import type { Proposal, ProposeResult } from '../../models/regimen/propose.ts';
import { regimenWords, simulatedLoading } from '../../models/regimen/proposal-words.ts';
import { formatNumber } from '../../models/result/format-number.ts';
import { fmt } from '../../models/result/summary-text.ts';
import { h } from './dom.ts';
import { cautionNote, figureTable, present } from './levels-tables.ts';

/** Rows shown before "Show all". */
const FIRST_ROWS = 10;

export function renderProposals(host: HTMLElement, result: ProposeResult, tryRow: (p: Proposal) => void): void {
  const u = result.units;
  const basis = result.population ?? null;
  const notes = result.proposals.flatMap((p) => {
    // A population row's capped loading dose is said on its line under the row already.
    const capped = simulatedLoading(p)?.note;
    const said = [capped ? `loading dose ${capped}` : null, p.note].filter((x): x is string => x !== null);
    return said.length > 0 ? [{ rank: p.rank, note: said.join('; ') }] : [];
  });
  const rows = result.proposals.map((p, i) => (basis ? populationRow(p, i, tryRow) : row(p, i, result, tryRow)));
  const head = basis
    ? [
        'Rank',
        'Tier',
        `Amount (${u.amount})`,
        `Interval (${u.time})`,
        `Infusion (${u.time})`,
        'All targets (% ± SE)',
        'Each target (% ± SE)',
        `Trough (${u.concentration}) median [5th–95th]`,
        `Peak (${u.concentration}) median [5th–95th]`,
        '',
      ]
    : ['Rank', 'Regimen', `Loading (${u.amount})`, `Trough (${u.concentration})`, `Peak (${u.concentration})`, `AUC24 (${u.auc})`, 'Targets met', `To the window (${u.time})`, ''];
  const caption = basis
    ? `Proposed regimens for ${basis.subjects} virtual subjects (seed ${basis.seed}), ranked by the share meeting every target (${result.searched.regimens} searched on the same subjects)`
    : `Proposed regimens, ranked (${result.searched.regimens} searched, ${result.searched.method})`;
  const table = figureTable(caption, head, rows, 'levels-proposals');
  const body = table.querySelector('tbody');
  const extra: HTMLElement[] = [];
  Array.from(body?.children ?? []).forEach((tr, i) => {
    const group = [tr as HTMLElement];
    // A population row's approach from empty goes on a line of its own below it, the table no wider.
    if (basis) {
      const line = approachLine(result.proposals[i], i, result, head.length);
      tr.after(line);
      group.push(line);
    }
    if (i >= FIRST_ROWS) extra.push(...group);
  });
  for (const tr of extra) tr.hidden = true;
  const more = h('button', { type: 'button', class: 'quiet', 'data-testid': 'levels-proposals-all' }, `Show all ${result.proposals.length}`);
  more.addEventListener('click', () => {
    for (const tr of extra) (tr as HTMLElement).hidden = false;
    more.remove();
  });
  host.replaceChildren(
    ...present(
    cautionNote('levels-propose-caution', basis ? `${basis.caution} ${result.caution}` : result.caution),
    h('p', {}, 'Targets: '),
    h('ol', { class: 'levels-targets' }, ...result.targets.map((t) => h('li', {}, t))),
    table,
    extra.length ? more : null,
    // Said in words under the table, as the command line and the report say them (a loading dose's first interval missing a target; subjects without a steady state count as not attaining).
    notes.length ? h('ul', { class: 'warnings', 'data-testid': 'levels-proposal-notes' }, ...notes.map((p) => h('li', {}, `Rank ${p.rank}: ${p.note}`))) : null,
    h('p', { class: 'note' }, `Ranking: ${result.rankingRule}.`),
    basis ? h('p', { class: 'note' }, `Shares ± one Monte Carlo standard error √(p(1 − p)/N); trough and peak in the compartment of the first target, ${basis.percentileRule}.`) : null,
    basis
      ? h(
          'p',
          { class: 'note' },
          `From the first dose (the line under each row): the time to the window, median [5th–95th percentile] over every subject, those who never reach it sorted last ("n.r.": the percentile falls among them); the share meeting every target in the first dosing interval${basis.loading ? ', without and with the loading dose' : ''}; and in each of the first intervals.`,
        )
      : null,
    h('p', { class: 'note' }, `Time to the window: ${result.timeToWindowDefinition}.`),
    basis?.loading ? h('p', { class: 'note' }, `Loading dose: ${basis.loading}.`) : null,
    ),
  );
}

/** A small second line in a cell: the secondary figure, so the table fits a 1280 px window. */
function sub(text: string): HTMLElement {
  return h('div', { class: 'levels-proposal-sub' }, text);
}

/** The loading amount; under it, the targets its first interval misses (the row's note says how), as "interval 1: 2✗". */
function loadingCell(p: Proposal, result: ProposeResult): HTMLElement {
  const l = simulatedLoading(p);
  if (!l) return h('td', {}, '—');
  const missed = l.firstIntervalTargetsMet.flatMap((m, k) => (m ? [] : [k]));
  return h(
    'td',
    { title: `computed ${fmt(l.computed)} ${result.units.amount} by ${l.method}; first trough ${fmt(l.firstTrough)} ${result.units.concentration}${l.note ? `; ${l.note}` : ''}`, 'data-testid': `levels-loading-${p.rank - 1}` },
    fmt(l.amount),
    // Capped or raised onto the strengths' sums: the word here, the amounts in the note under the table.
    l.note ? sub(l.note.split(':')[0]) : null,
    // Lowered to keep an upper bound in its own first interval: the word here (the column stays narrow), the amounts and the bound in the note under the table.
    l.loweredFrom !== null && l.loweredFrom !== undefined ? sub('lowered') : null,
    missed.length ? h('div', { class: 'levels-proposal-sub levels-unmet' }, `interval 1: ${missed.map((k) => `${k + 1}✗`).join(' ')}`) : null,
  );
}

function row(p: Proposal, i: number, result: ProposeResult, tryRow: (p: Proposal) => void): HTMLElement[] {
  const s = p.steadyState;
  const u = result.units;
  const met = p.targetsMet.map((m, k) => `${k + 1}${m ? '✓' : '✗'}`).join(' ');
  const tryButton = h('button', { type: 'button', class: 'quiet', 'data-testid': `levels-try-${i}`, 'aria-label': `Try rank ${p.rank} in compare` }, 'Try in compare');
  tryButton.addEventListener('click', () => tryRow(p));
  const loaded = simulatedLoading(p);
  const toWindow = p.timeToWindow === null ? '—' : `${fmt(p.timeToWindow)}${p.intervalsToWindow !== null ? ` (${p.intervalsToWindow} τ)` : ''}`;
  return [
    h('th', { scope: 'row', class: p.allMet ? 'levels-met' : '' }, String(p.rank)),
    // The regimen in words, wrapping within its cell (amount, interval and infusion were three columns too wide for 1280 px).
    h('td', { class: 'levels-regimen', 'data-testid': `levels-amount-${i}` }, regimenWords(p, u, '\u00a0')),
    loadingCell(p, result),
    h('td', {}, fmt(s?.trough ?? null)),
    h('td', {}, fmt(s?.peak ?? null)),
    h('td', {}, fmt(s?.auc24 ?? null)),
    h('td', { class: p.allMet ? 'levels-met' : 'levels-unmet', title: p.note ?? '' }, p.allMet ? `all ${met}` : met),
    // The row's note, when it has one, is in the list under the table (a cell keeps to its figure).
    h('td', { title: p.note ?? '' }, toWindow, loaded ? sub(`loaded ${loaded.timeToWindow === null ? '—' : fmt(loaded.timeToWindow)}`) : null),
    h('td', {}, tryButton),
  ];
}

/** "83.4% ± 1.7" (83% when the tenth is 0), written as the command line and the report write it. */
export function percentWithError(x: { probability: number; standardError: number }): string {
  return `${formatNumber(Number((x.probability * 100).toFixed(1)))}% ± ${formatNumber(Number((x.standardError * 100).toFixed(1)))}`;
}

function spread(x: { p5: number; p50: number; p95: number }): string {
  return Number.isNaN(x.p50) || x.p50 === null ? '—' : `${fmt(x.p50)} [${fmt(x.p5)}–${fmt(x.p95)}]`;
}

/** "36 [24–n.r.]": median [5th–95th] of the time to the window, n.r. where a percentile falls among subjects who never reach it. */
function timeSpread(t: { p5: number | null; p50: number | null; p95: number | null }): string {
  const v = (x: number | null) => (x === null ? 'n.r.' : fmt(x));
  return `${v(t.p50)} [${v(t.p5)}–${v(t.p95)}]`;
}

/** The reasons subjects never reach the window, for a tooltip. */
function neverTitle(a: NonNullable<Proposal['population']>['approach'], subjects: number): string {
  const n = a.neverReached;
  return `${a.reached} of ${subjects} subjects reach the window; never: ${n.steadyStateMisses} whose steady state misses a target, ${n.noSteadyState} without a steady state, ${n.onlyAtSteadyState} only at the steady state, ${n.failed} failed runs`;
}

/** The line under a population row: time to the window, the first interval without and with the loading dose, the first intervals. */
function approachLine(p: Proposal, i: number, result: ProposeResult, columns: number): HTMLElement {
  const a = (p.population as NonNullable<Proposal['population']>).approach;
  const subjects = result.population?.subjects ?? 0;
  const first = a.firstInterval;
  const capped = p.loading?.note ? ` (${p.loading.note})` : '';
  const loaded = first.withLoading && p.loading ? `, ${percentWithError(first.withLoading)} after a loading dose of ${fmt(p.loading.amount)} ${result.units.amount}${capped}` : '';
  const byInterval = a.byInterval.map((x) => formatNumber(Math.round(x.probability * 100))).join(' · ');
  const cell = h(
    'td',
    { colspan: String(columns), class: 'note', 'data-testid': `levels-approach-${i}`, title: neverTitle(a, subjects) },
    `From the first dose: to the window ${timeSpread(a.timeToWindow)} ${result.units.time} (reached by ${a.reached} of ${subjects}); interval 1: ${percentWithError(first.without)}${loaded}; intervals 1–${a.byInterval.length}: ${byInterval}%`,
  );
  // The table's cells keep to one line; this one wraps within the table's width, left to right (CSSOM: no inline style attribute).
  cell.style.whiteSpace = 'normal';
  cell.style.textAlign = 'left';
  return h('tr', { class: 'levels-approach' }, cell);
}

/** A population row: the joint share ranks it; each target's share, trough and peak percentiles beside it. */
function populationRow(p: Proposal, i: number, tryRow: (p: Proposal) => void): HTMLElement[] {
  const a = p.population as NonNullable<Proposal['population']>;
  const tryButton = h('button', { type: 'button', class: 'quiet', 'data-testid': `levels-try-${i}`, 'aria-label': `Try rank ${p.rank} in compare` }, 'Try in compare');
  tryButton.addEventListener('click', () => tryRow(p));
  return [
    h('th', { scope: 'row' }, String(p.rank)),
    h('td', { title: 'Regimens in one tier are within 2 standard errors of its leader' }, String(a.tier)),
    h('td', { 'data-testid': `levels-amount-${i}` }, fmt(p.amount)),
    h('td', {}, fmt(p.interval)),
    h('td', {}, p.duration > 0 ? fmt(p.duration) : '—'),
    h('td', { 'data-testid': `levels-joint-${i}`, title: `${a.joint.attained} subjects` }, percentWithError(a.joint)),
    h('td', {}, ...a.targets.map((t, k) => h('div', {}, `${k + 1}: ${percentWithError(t)}`))),
    h('td', { title: p.note ?? '' }, spread(a.trough)),
    h('td', {}, spread(a.peak)),
    h('td', {}, tryButton),
  ];
}
