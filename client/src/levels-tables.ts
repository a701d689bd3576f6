/**
 * Pieces the measured-levels views share: the caution every output carries, a figure table in
 * the page's style, and the non-compartmental figures as tables (per subject and compartment,
 * each figure with its value, unit and rule, the flags as warnings; the summary over subjects
 * when there are several), and under each profile a control that fixes its terminal line "from"
 * a time (the scenario's nca.terminal) or gives it back to the best adjusted R².
 */
import { ncaFigureInfo, ncaFigureNames, ncaLabel, type NcaDimension, type NcaFigureName } from '../../models/levels/nca.ts';
import type { ScenarioNca, ScenarioNcaProfile } from '../../models/levels/nca-scenario.ts';
import type { Problem } from './api.ts';
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

/** What a profile's terminal-line control asks of the panel: the scenario's own entry for the profile, and writing it. */
export interface TerminalHooks {
  /** The profile's own entry of nca.terminal (its subject and compartment): its path and its `from` as written; null when it has none. */
  own(subject: string | null, compartment: string): { path: string; from: string } | null;
  /** Writes the profile's own entry "from" the time typed, and computes the figures again. */
  fix(subject: string | null, compartment: string, from: string): void;
  /** Gives the profile back to the best adjusted R² and computes the figures again. */
  automatic(subject: string | null, compartment: string): void;
}

/** How the profile's terminal line was chosen, in words. */
function terminalWords(p: ScenarioNcaProfile, timeUnit: string): string {
  if (p.terminalFixed) return `fixed by the user from ${fmt(p.terminalFixed.from)} ${timeUnit} (${p.terminalFixed.path})`;
  return p.result.terminal ? 'chosen by the best adjusted R²' : 'none: the levels after Cmax do not allow one';
}

/**
 * Times typed in a profile's box but not yet fixed, by subject and compartment: the tables are
 * drawn again when another profile's line is fixed, and what was typed must survive that.
 */
const typedTerminals = new Map<string, string>();
const profileKey = (subject: string | null, compartment: string) => JSON.stringify([subject, compartment]);

/** Forgets the typed times (another scenario was opened: its profiles are others). */
export function forgetTypedTerminals(): void {
  typedTerminals.clear();
}

/**
 * "Terminal line from [time] Fix / Automatic": the control writes nca.terminal, the panel reruns.
 * Problems with the entry (a 400 at its path) go beside the field: markTerminalProblems.
 */
function terminalControl(p: ScenarioNcaProfile, k: number, nca: ScenarioNca, hooks: TerminalHooks): HTMLElement {
  const own = hooks.own(p.subject, p.compartment);
  const id = `levels-terminal-from-${k}`;
  const key = profileKey(p.subject, p.compartment);
  const written = own && own.from !== 'automatic' ? own.from : '';
  const input = h('input', { type: 'text', id, class: 'levels-input', value: typedTerminals.get(key) ?? written, placeholder: 'e.g. 96 h or 2026-03-08T08:00', autocomplete: 'off', spellcheck: 'false', 'data-testid': id, 'aria-describedby': `${id}-now` });
  const fix = h('button', { type: 'button', 'data-testid': `levels-terminal-fix-${k}` }, 'Fix from this time');
  const automatic = h('button', { type: 'button', class: 'quiet', 'data-testid': `levels-terminal-automatic-${k}`, disabled: !p.terminalFixed && own === null }, 'Automatic');
  // An empty box fixes nothing: writing `from: ""` would leave the scenario invalid (and every run refused) until mended.
  const fixTyped = () => {
    control.querySelectorAll('.field-error').forEach((e) => e.remove());
    if (input.value.trim() !== '') {
      typedTerminals.delete(key);
      hooks.fix(p.subject, p.compartment, input.value);
      return;
    }
    const msg = h('p', { class: 'field-error', id: `${id}-error`, role: 'alert' }, 'Type the time the line starts at (e.g. 96 h or a date-time), or choose Automatic.');
    control.querySelector('.run-row')?.after(msg);
    input.setAttribute('aria-invalid', 'true');
    input.setAttribute('aria-describedby', `${id}-error ${id}-now`);
    input.focus();
  };
  fix.addEventListener('click', fixTyped);
  input.addEventListener('input', () => (input.value === written ? typedTerminals.delete(key) : typedTerminals.set(key, input.value)));
  input.addEventListener('keydown', (e) => {
    if (e.key === 'Enter') {
      e.preventDefault();
      fixTyped();
    }
  });
  automatic.addEventListener('click', () => {
    typedTerminals.delete(key);
    hooks.automatic(p.subject, p.compartment);
  });
  // A fixed line of too few levels is flagged; the flag is repeated here, where it can be mended.
  const few = p.terminalFixed ? p.result.flags.filter((f) => f.figure === 'terminalRate' && f.message.startsWith(p.terminalFixed?.path ?? '')) : [];
  const control = h(
    'div',
    {
      class: 'levels-terminal',
      'data-testid': `levels-terminal-${k}`,
      'data-subject': p.subject,
      'data-compartment': p.compartment,
      // A wider entry (no subject or no compartment) that fixed this line: its problems belong here too.
      'data-applied': p.terminalFixed?.path.startsWith('nca.') ? p.terminalFixed.path : null,
    },
    h('div', { class: 'run-row' }, h('label', { for: id }, 'Terminal line from'), input, fix, automatic),
    h('p', { class: 'note', id: `${id}-now` }, `Now ${terminalWords(p, nca.units.time)}. A time takes the levels at or after it that come after Cmax; it is written to the scenario's nca.terminal.`),
    few.length ? h('ul', { class: 'warnings' }, ...few.map((f) => h('li', {}, f.message))) : null,
  );
  return control;
}

/**
 * A 400 after the control wrote nca.terminal: each problem of an entry beside the control of the
 * profiles it concerns (the profile's own entry as the scenario has it now, and the entry that
 * applied at the last run); true when one was placed.
 */
export function markTerminalProblems(host: HTMLElement, problems: readonly Problem[], hooks: Pick<TerminalHooks, 'own'>): boolean {
  let placed = false;
  host.querySelectorAll<HTMLElement>('.levels-terminal').forEach((control) => {
    control.querySelectorAll('.field-error').forEach((e) => e.remove());
    const input = control.querySelector('input');
    input?.removeAttribute('aria-invalid');
    const own = control.dataset.compartment === undefined ? null : hooks.own(control.dataset.subject ?? null, control.dataset.compartment);
    const paths = [own?.path, control.dataset.applied].filter((x): x is string => x !== undefined);
    const mine = problems.filter((q) => paths.some((path) => q.path === path || q.path.startsWith(`${path}.`)));
    if (mine.length === 0 || !input) return;
    const msg = h('p', { class: 'field-error', id: `${input.id}-error`, role: 'alert' }, mine.map((q) => `${q.path}: ${q.message}`).join(' '));
    control.querySelector('.run-row')?.after(msg);
    input.setAttribute('aria-invalid', 'true');
    input.setAttribute('aria-describedby', `${input.id}-error ${input.id}-now`);
    placed = true;
  });
  return placed;
}

/** One table per subject and compartment, then the summary per compartment when there are several subjects. */
export function ncaTables(nca: ScenarioNca, terminal?: TerminalHooks): HTMLElement[] {
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
        h('p', { class: 'note' }, `Figures ${dose}; ${p.result.rule === 'linear' ? 'linear trapezoidal rule' : 'linear-up/log-down trapezoidal rule'}${p.result.terminal ? `; terminal line over ${p.result.terminal.indices.length} levels (${p.terminalFixed ? terminalWords(p, nca.units.time) : p.result.terminal.chosenBy})` : ''}.`),
        terminal ? terminalControl(p, k, nca, terminal) : null,
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
