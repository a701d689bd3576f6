/**
 * The figures: per chosen compartment, the whole-span figures, one row per dosing interval
 * and the steady-state figures, with the kept reference beside the current run; then how
 * the run was solved, in plain words (method, steps, half-life, mass balance, warnings).
 */
import type { SimulationResultJson } from '../../models/result/result-format.ts';
import { fmt } from '../../models/result/summary-text.ts';
import { plainDoseWords } from '../../models/result/dose-words.ts';
import { h } from './dom.ts';
import { clockNote, observationsTable } from './observations-overlay.ts';

type Result = SimulationResultJson;
type Diagnostics = Result['diagnostics'];
type Window = Result['metrics']['compartments'][string]['overall']['windows'][number];
type SteadyCompartment = NonNullable<Result['metrics']['steadyState']>['compartments'][number];

const maxIntervalRows = 400;

const methodNames: Record<string, string> = {
  exact: 'matrix exponential',
  dopri5: 'Dormand–Prince 5(4)',
  dop853: 'Dormand–Prince 8(5,3)',
  rodas4: 'Rosenbrock RODAS4',
  rosenbrock: 'Rosenbrock RODAS4',
  euler: 'Euler',
  heun: 'Heun',
  rk4: 'classical Runge–Kutta 4',
  abm2: 'Adams–Bashforth–Moulton 2',
};

function plural(n: number, word: string, many = `${word}s`): string {
  return `${n} ${n === 1 ? word : many}`;
}

/** The method and its work in one sentence. */
export function methodSentence(d: Diagnostics, timeUnit: string): string {
  const names = d.methodsUsed.map((m) => methodNames[m] ?? m).join(' then ');
  if (d.path === 'exact') {
    return `Solved exactly with the matrix exponential (linear model): ${plural(d.segments, 'piece')} between dose events, ${plural(d.propagators, 'propagator')} computed.`;
  }
  if (d.path === 'fixed') {
    return `Fixed step ${fmt(d.step)} ${timeUnit} with ${names}: ${plural(d.acceptedSteps, 'step')}, ${plural(d.derivativeEvaluations, 'evaluation')}. No error control — check the step against a smaller one.`;
  }
  const jac = d.jacobianEvaluations > 0 ? `, ${plural(d.jacobianEvaluations, 'Jacobian evaluation')}` : '';
  return (
    `Adaptive ${names}, rtol ${fmt(d.rtol)}: ${d.acceptedSteps} steps accepted, ${d.rejectedSteps} rejected, ${plural(d.derivativeEvaluations, 'evaluation')}${jac}; ` +
    `switched to the stiff method ${plural(d.stiffSwitches, 'time')}.`
  );
}

function valueCell(v: number | null | undefined, unit: string, testid?: string, extra?: string): HTMLTableCellElement {
  const num = h('span', { class: 'num', 'data-testid': testid ?? null }, fmt(v));
  const shown = v !== null && v !== undefined && Number.isFinite(v);
  return h('td', {}, num, unit && shown ? h('span', { class: 'unit' }, unit) : null, extra && shown ? h('span', { class: 'extra' }, ` ${extra}`) : null);
}

function percent(v: number | null | undefined): number | null {
  return v === null || v === undefined ? null : 100 * v;
}

function windowEdges(w: Window, unit: string): string {
  if (w.above !== null && w.below !== null) return `${fmt(w.above)}–${fmt(w.below)} ${unit}`;
  if (w.above !== null) return `above ${fmt(w.above)} ${unit}`;
  return `below ${fmt(w.below)} ${unit}`;
}

/** A value, its unit and, optionally, words after it that belong to that side alone ("(4 cycles)"). */
type Value = [number | null | undefined, string] | [number | null | undefined, string, string | undefined];

interface Row {
  name: string;
  cur: Value;
  ref?: Value;
  testid?: string;
}

function figureTable(caption: string, rows: Row[], withRef: boolean, cls: string): HTMLTableElement {
  const head = h('tr', {}, h('th', { scope: 'col' }, 'Figure'), withRef ? h('th', { scope: 'col', class: 'ref-col' }, 'Reference') : null, h('th', { scope: 'col' }, withRef ? 'Current' : 'Value'));
  const body = h('tbody', {});
  for (const r of rows) {
    const tr = h('tr', {}, h('th', { scope: 'row' }, r.name));
    if (withRef) {
      const refCell = valueCell(r.ref?.[0] ?? null, r.ref?.[1] ?? '', r.testid ? `ref-${r.testid}` : undefined, r.ref?.[2]);
      refCell.classList.add('ref-col');
      tr.append(refCell);
    }
    tr.append(valueCell(r.cur[0], r.cur[1], r.testid, r.cur[2]));
    body.append(tr);
  }
  return h('table', { class: `fig ${cls}` }, h('caption', {}, caption), h('thead', {}, head), body);
}

function overallRows(id: string, cur: Result, ref: Result | null): Row[] {
  const u = cur.units;
  const ru = ref?.units;
  const o = cur.metrics.compartments[id]?.overall;
  const ro = ref?.metrics.compartments[id]?.overall;
  if (!o) return [];
  const rows: Row[] = [
    { name: 'Cmax', cur: [o.cmax, u.concentration], ref: ro && ru ? [ro.cmax, ru.concentration] : undefined, testid: `cmax-${id}` },
    { name: 'Tmax', cur: [o.tmax, u.time], ref: ro && ru ? [ro.tmax, ru.time] : undefined, testid: `tmax-${id}` },
    { name: 'AUC over the span', cur: [o.auc, u.auc], ref: ro && ru ? [ro.auc, ru.auc] : undefined, testid: `auc-${id}` },
    { name: 'Concentration at the end', cur: [o.cEnd, u.concentration], ref: ro && ru ? [ro.cEnd, ru.concentration] : undefined },
  ];
  o.windows.forEach((w, k) => {
    const rw = ro?.windows[k];
    const edges = windowEdges(w, u.concentration);
    const both = w.above !== null && w.below !== null;
    rows.push({ name: `Time in window ${edges}`, cur: [percent(w.fractionInWindow), '%'], ref: rw ? [percent(rw.fractionInWindow), '%'] : undefined, testid: k === 0 ? `in-window-${id}` : undefined });
    rows.push({ name: 'Time in window', cur: [w.timeInWindow ?? w.timeAbove ?? w.timeBelow, u.time], ref: rw && ru ? [rw.timeInWindow ?? rw.timeAbove ?? rw.timeBelow, ru.time] : undefined });
    if (w.above !== null || both) rows.push({ name: 'Time under window', cur: [w.timeUnderWindow, u.time], ref: rw && ru ? [rw.timeUnderWindow, ru.time] : undefined });
    if (w.below !== null || both) rows.push({ name: 'Time over window', cur: [w.timeOverWindow, u.time], ref: rw && ru ? [rw.timeOverWindow, ru.time] : undefined });
  });
  return rows;
}

function intervalTable(id: string, cur: Result, ref: Result | null): HTMLElement | null {
  const u = cur.units;
  const ivs = cur.metrics.compartments[id]?.intervals ?? [];
  if (ivs.length === 0) return null;
  const rivs = ref?.metrics.compartments[id]?.intervals ?? null;
  const withRef = rivs !== null;
  const cols: [string, string, (iv: (typeof ivs)[number]) => number | null][] = [
    ['Cmax', u.concentration, (iv) => iv.cmax],
    ['Tmax', u.time, (iv) => iv.tmax],
    ['Trough', u.concentration, (iv) => iv.trough],
    ['AUC', u.auc, (iv) => iv.auc],
    ['Cavg', u.concentration, (iv) => iv.cavg],
    ['Fluctuation', '%', (iv) => percent(iv.fluctuation)],
  ];
  const head1 = h('tr', {}, h('th', { scope: 'col', rowspan: withRef ? 2 : null }, '#'), h('th', { scope: 'col', rowspan: withRef ? 2 : null }, `Interval (${u.time})`));
  const head2 = h('tr', {});
  for (const [name, unit] of cols) {
    head1.append(h('th', { scope: withRef ? 'colgroup' : 'col', colspan: withRef ? 2 : null }, name, h('span', { class: 'unit' }, unit)));
    if (withRef) head2.append(h('th', { scope: 'col', class: 'ref-col' }, 'ref.'), h('th', { scope: 'col' }, 'current'));
  }
  const body = h('tbody', {});
  const shown = ivs.slice(0, maxIntervalRows);
  shown.forEach((iv, k) => {
    const tr = h('tr', {}, h('th', { scope: 'row' }, String(iv.index + 1)), h('td', { class: 'span-cell' }, `${fmt(iv.start)}–${fmt(iv.end)}`));
    const riv = rivs?.[k];
    for (const [, , get] of cols) {
      if (withRef) tr.append(h('td', { class: 'ref-col' }, riv ? fmt(get(riv)) : '—'));
      tr.append(h('td', {}, fmt(get(iv))));
    }
    body.append(tr);
  });
  const table = h(
    'table',
    { class: withRef ? 'fig intervals compare' : 'fig intervals', 'data-testid': `intervals-${id}` },
    h('caption', {}, withRef ? 'Each dosing interval: reference beside current' : 'Each dosing interval'),
    h('thead', {}, head1, withRef ? head2 : null),
    body,
  );
  const details = h('details', { class: 'intervals-box', open: ivs.length <= 40 }, h('summary', {}, `Dosing intervals (${ivs.length})`), h('div', { class: 'table-scroll' }, table));
  if (ivs.length > maxIntervalRows) details.append(h('p', { class: 'note' }, `First ${maxIntervalRows} of ${ivs.length} intervals shown; export the curves for the rest.`));
  return details;
}

/** Dose-line labels of the current run's scenario and of the reference's, for the engine's words. */
export interface DoseLabels {
  current: (string | null)[];
  reference: (string | null)[];
}

function steadyBlock(id: string, cur: Result, ref: Result | null, labels: DoseLabels): HTMLElement {
  const ss = cur.metrics.steadyState;
  const rss = ref?.metrics.steadyState ?? null;
  const box = h('div', { class: 'steady' });
  if (!ss) {
    box.append(h('p', { class: 'note' }, 'Steady state: none — no dose line repeats to the end of the span.'));
    return box;
  }
  if (!ss.reached) {
    box.append(h('p', { class: 'note' }, `Steady state not reached: ${plainDoseWords(ss.message, labels.current)}.`));
    return box;
  }
  const c = ss.compartments.find((x) => x.compartment === id);
  const rc = rss?.reached ? rss.compartments.find((x) => x.compartment === id) : undefined;
  if (!c) return box;
  const u = cur.units;
  const ru = ref?.units;
  // Words after a value (the cycle count) come from the same side as the value.
  const pair = (
    get: (x: SteadyCompartment) => number | null,
    unit: (x: Result['units']) => string,
    testid?: string,
    extra?: (x: SteadyCompartment) => string | undefined,
  ): Pick<Row, 'cur' | 'ref' | 'testid'> => ({
    cur: [get(c), unit(u), extra?.(c)],
    ref: rc && ru ? [get(rc), unit(ru), extra?.(rc)] : ref ? [null, ''] : undefined,
    testid,
  });
  const cycles = (n: number | null) => (n === null ? undefined : `(${plural(n, 'cycle')})`);
  const rows: Row[] = [
    { name: 'Cmax', ...pair((x) => x.cmax, (x) => x.concentration, `ss-cmax-${id}`) },
    { name: 'Trough', ...pair((x) => x.trough, (x) => x.concentration, `ss-trough-${id}`) },
    { name: 'Cavg', ...pair((x) => x.cavg, (x) => x.concentration) },
    { name: 'AUCτ', ...pair((x) => x.auc, (x) => x.auc) },
    { name: 'Fluctuation (Cmax − Cmin)/Cavg, in %', ...pair((x) => percent(x.fluctuation), () => '%', `ss-fluctuation-${id}`) },
    { name: 'Accumulation ratio (AUCτ at steady state / first cycle)', ...pair((x) => x.accumulationRatio, () => '') },
    { name: 'Time to 90% of steady state', ...pair((x) => x.timeTo90, (x) => x.time, `ss-t90-${id}`, (x) => cycles(x.cyclesTo90)) },
    { name: 'Time to 95% of steady state', ...pair((x) => x.timeTo95, (x) => x.time, `ss-t95-${id}`, (x) => cycles(x.cyclesTo95)) },
  ];
  box.append(figureTable(`Steady state of the regimen continued, dosing cycle τ = ${fmt(ss.period)} ${u.time}`, rows, ref !== null, 'steady-table'));
  const notThere = cur.diagnostics.warnings.filter((w) => w.includes('is not at steady state'));
  for (const w of notThere) box.append(h('p', { class: 'note warning-note', 'data-testid': 'steady-not-there' }, plainDoseWords(w, labels.current)));
  box.append(
    h('p', { class: 'note', 'data-testid': 'steady-message' }, `Found as: ${plainDoseWords(ss.message, labels.current)}. Time to 90% (95%): ${ss.approachDefinition}.`),
  );
  return box;
}

function diagnosticsBlock(cur: Result, ref: Result | null, labels: DoseLabels): HTMLElement {
  const d = cur.diagnostics;
  const u = cur.units;
  const t = d.disposition;
  const mb = d.massBalance;
  const halfLives = t.halfLives.filter((x): x is number => x !== null);
  const list = h(
    'ul',
    { class: 'diag-list' },
    h('li', { 'data-testid': 'method-sentence' }, methodSentence(d, u.time)),
    h(
      'li',
      {},
      t.terminalHalfLife === null
        ? 'Terminal half-life: none — some drug never leaves the body in this model.'
        : `Terminal half-life ${fmt(t.terminalHalfLife)} ${u.time}` + (t.basis === 'linearised' ? ' (saturable model, linearised at zero concentration)' : '') + '.',
      halfLives.length > 1 ? ` Half-lives of all phases: ${halfLives.map((x) => fmt(x)).join(', ')} ${u.time}.` : '',
    ),
    h(
      'li',
      {},
      `Mass balance: ${fmt(mb.dosed)} ${u.amount} arrived = ${fmt(mb.remaining)} ${u.amount} still in the body + ${fmt(mb.eliminated)} ${u.amount} eliminated (relative error ${fmt(mb.relativeError, 2)}).`,
    ),
  );
  const warnings = d.warnings.length
    ? h('ul', { class: 'warnings', 'aria-label': 'Warnings' }, ...d.warnings.map((w) => h('li', {}, plainDoseWords(w, labels.current))))
    : h('p', { class: 'note' }, 'No warnings.');
  const section = h('section', { class: 'diagnostics', 'aria-labelledby': 'diag-heading' }, h('h3', { id: 'diag-heading' }, 'How this run was solved'), list, warnings);
  if (ref) {
    section.append(
      h(
        'p',
        { class: 'note ref-note' },
        `Reference run: ${methodSentence(ref.diagnostics, ref.units.time)}` +
          (ref.diagnostics.disposition.terminalHalfLife !== null ? ` Terminal half-life ${fmt(ref.diagnostics.disposition.terminalHalfLife)} ${ref.units.time}.` : ''),
      ),
    );
    if (ref.diagnostics.warnings.length) section.append(h('ul', { class: 'warnings', 'aria-label': 'Reference warnings' }, ...ref.diagnostics.warnings.map((w) => h('li', {}, `Reference: ${plainDoseWords(w, labels.reference)}`))));
  }
  return section;
}

export function renderFigures(
  host: HTMLElement,
  cur: Result | null,
  ref: Result | null,
  selected: string[],
  referenceTitle: string | null,
  labels: DoseLabels = { current: [], reference: [] },
): void {
  if (!cur) {
    host.replaceChildren(h('p', { class: 'empty' }, 'Run the simulation to see the figures.'));
    return;
  }
  const parts: HTMLElement[] = [];
  if (ref) parts.push(h('p', { class: 'compare-note' }, `Reference: ${referenceTitle ?? ref.title}. Current: ${cur.title}.`));
  const ids = Object.keys(cur.compartments).filter((id) => selected.includes(id) && cur.metrics.compartments[id]);
  if (ids.length === 0) parts.push(h('p', { class: 'empty' }, 'Choose a compartment above the plot to see its figures.'));
  for (const id of ids) {
    const s = cur.compartments[id];
    const headingId = `fig-${id}`;
    const withRef = ref !== null && ref.metrics.compartments[id] !== undefined;
    const section = h(
      'section',
      { class: 'cmt-figures', 'aria-labelledby': headingId },
      h('h3', { id: headingId }, `Compartment ${id}`, s.label && s.label !== id ? ` — ${s.label}` : ''),
      figureTable(`Whole span, ${fmt(cur.times[0])}–${fmt(cur.times[cur.times.length - 1])} ${cur.units.time}`, overallRows(id, cur, withRef ? ref : null), withRef, 'overall'),
    );
    if (cur.metrics.compartments[id].overall.windows.length === 0) section.append(h('p', { class: 'note' }, 'No target window for this compartment.'));
    const iv = intervalTable(id, cur, withRef ? ref : null);
    if (iv) section.append(iv);
    section.append(steadyBlock(id, cur, withRef ? ref : null, labels));
    parts.push(section);
  }
  // The clock origin and the measured levels beside the model's predictions.
  const clock = clockNote(cur);
  if (clock) parts.unshift(clock);
  const levels = observationsTable(cur, selected);
  if (levels) parts.push(levels);
  parts.push(diagnosticsBlock(cur, ref, labels));
  host.replaceChildren(...parts);
}
