/**
 * Pieces the measured-levels views share: the caution every output carries, a figure table in
 * the page's style, and the non-compartmental figures as tables (per subject and compartment,
 * each figure with its value, unit and rule, the flags as warnings; the summary over subjects
 * when there are several).
 */
import { ncaFigureInfo, ncaFigureNames, ncaLabel, type NcaDimension, type NcaFigureName } from '../../models/levels/nca.ts';
import type { ScenarioNca } from '../../models/levels/nca-scenario.ts';
import { fmt } from '../../models/result/summary-text.ts';
import { h } from './dom.ts';

export const LEVELS_CAUTION = 'Model outputs for review by a clinician; not dosing advice.';

/** The caution in words, with the server's own caution after it when it gives one. */
export function cautionNote(testId: string, extra?: string): HTMLElement {
  return h('p', { class: 'levels-caution', role: 'note', 'data-testid': testId }, h('strong', {}, LEVELS_CAUTION), extra ? ` ${extra}` : '');
}

/** The parts that exist, in order (for replaceChildren). */
export function present(...parts: (HTMLElement | null)[]): HTMLElement[] {
  return parts.filter((p): p is HTMLElement => p !== null);
}

/** A table with a caption, a header row and body rows (the first cell of each a row header). */
export function figureTable(caption: string, head: string[], rows: HTMLElement[][], testId: string): HTMLElement {
  return h(
    'div',
    { class: 'table-scroll' },
    h(
      'table',
      { class: 'fig levels-table', 'data-testid': testId },
      h('caption', {}, caption),
      h('thead', {}, h('tr', {}, ...head.map((x) => h('th', { scope: 'col' }, x)))),
      h('tbody', {}, ...rows.map((r) => h('tr', {}, ...r))),
    ),
  );
}

/** A figure's unit in the result's units; amount over a concentration written amount/volume cancels to the volume (mg/(mg/L·h) is L/h). */
function unitOf(name: NcaFigureName, u: ScenarioNca['units']): string {
  const d: NcaDimension | 'percent' | 'none' = ncaFigureInfo[name].dimension;
  if (d === 'percent') return '%';
  if (d === 'none') return '';
  const power = (unit: string, p: number) => (p === 1 ? unit : `${/[/·]/.test(unit) ? `(${unit})` : unit}${p === 2 ? '²' : `^${p}`}`);
  if (d.amount === 0 && d.concentration === 0 && d.time === -1) return `1/${u.time}`;
  if (d.amount === 0) return [d.concentration > 0 ? power(u.concentration, d.concentration) : '', d.time > 0 ? power(u.time, d.time) : ''].filter(Boolean).join('·');
  const m = /^([^/]+)\/([^/]+)$/.exec(u.concentration);
  const volume = m && m[1].trim() === u.amount ? m[2].trim() : null;
  if (d.time === 0) return volume ?? `${u.amount}/(${u.concentration})`;
  return volume ? `${volume}/${u.time}` : `${u.amount}/(${u.concentration}·${u.time})`;
}

/** One table per subject and compartment, then the summary per compartment when there are several subjects. */
export function ncaTables(nca: ScenarioNca): HTMLElement[] {
  const out: HTMLElement[] = [];
  for (const [k, p] of nca.profiles.entries()) {
    const who = `${p.subject ?? 'Levels'} — ${p.compartment}`;
    const dose = p.dose ? `after dose ${p.doseNumber ?? 1} (${fmt(p.dose.amount)} ${nca.units.amount}, ${p.dose.route})${p.interval !== null ? `, over τ = ${fmt(p.interval)} ${nca.units.time}` : ''}` : 'no dose in the scenario';
    const rows = ncaFigureNames.map((name) => {
      const v = p.result.figures[name];
      const flagged = p.result.flags.filter((f) => f.figure === name);
      return [
        h('th', { scope: 'row' }, ncaLabel(name, p.result.route)),
        h('td', { 'data-value': v === null ? '' : String(v), class: flagged.length ? 'levels-flagged' : '' }, fmt(v), flagged.length ? ' ⚠' : ''),
        h('td', { class: 'unit' }, unitOf(name, nca.units)),
        h('td', { class: 'levels-rule' }, ncaFigureInfo[name].rule),
      ];
    });
    const flags = p.result.flags.map((f) => h('li', {}, `${f.figure === 'levels' ? 'Levels' : ncaLabel(f.figure, p.result.route)}: ${f.message}`));
    const leftOut = p.leftOut.map((l) => h('li', {}, `${l.path} left out: ${l.reason}`));
    out.push(
      h(
        'section',
        { class: 'levels-block', 'data-testid': `levels-nca-profile-${k}` },
        h('h4', {}, who),
        h('p', { class: 'note' }, `Figures ${dose}; ${p.result.rule === 'linear' ? 'linear trapezoidal rule' : 'linear-up/log-down trapezoidal rule'}${p.result.terminal ? `; terminal line over ${p.result.terminal.indices.length} levels (${p.result.terminal.chosenBy})` : ''}.`),
        figureTable(`Non-compartmental figures: ${who}`, ['Figure', 'Value', 'Unit', 'Rule'], rows, `levels-nca-table-${k}`),
        flags.length ? h('ul', { class: 'warnings', 'data-testid': `levels-nca-flags-${k}` }, ...flags) : null,
        leftOut.length ? h('ul', { class: 'note levels-notes' }, ...leftOut) : null,
      ),
    );
  }
  for (const s of nca.summaries) {
    if (s.summary.subjects < 2) continue;
    const route = nca.route;
    const rows = ncaFigureNames.flatMap((name) => {
      const f = s.summary.figures[name];
      if (!f) return [];
      const median = ncaFigureInfo[name].summary === 'median';
      return [
        [
          h('th', { scope: 'row' }, ncaLabel(name, route)),
          h('td', {}, String(f.n)),
          h('td', {}, median ? fmt(f.median) : fmt(f.geometricMean)),
          h('td', {}, median ? `${fmt(f.min)} to ${fmt(f.max)}` : f.geometricCv === null ? '—' : `${fmt(f.geometricCv * 100, 3)}%`),
          h('td', {}, fmt(f.mean)),
          h('td', { class: 'unit' }, unitOf(name, nca.units)),
        ],
      ];
    });
    out.push(
      h(
        'section',
        { class: 'levels-block', 'data-testid': `levels-nca-summary-${s.compartment}` },
        h('h4', {}, `Over ${s.summary.subjects} subjects — ${s.compartment}`),
        figureTable(`Summary over subjects (${s.compartment}): geometric mean and CV, or median and range for times`, ['Figure', 'n', 'Geometric mean (median)', 'Geometric CV (range)', 'Arithmetic mean', 'Unit'], rows, `levels-nca-summary-table-${s.compartment}`),
      ),
    );
  }
  if (nca.notes.length) out.push(h('ul', { class: 'note levels-notes' }, ...nca.notes.map((n) => h('li', {}, n))));
  return out;
}
