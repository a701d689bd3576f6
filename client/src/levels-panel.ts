/**
 * The "Measured levels" panel, folded away until used: the scenario's observations as an
 * editable table (clock times beside elapsed time once a run has them), and three actions on
 * them — non-compartmental figures (POST /api/nca), a fit of chosen quantities (POST /api/fit,
 * its settings written to the scenario's `fit`), and regimen proposals from the scenario's
 * `propose` block (POST /api/propose), each row of which can be tried in the compare overlay.
 * The settings sit in the scenario form, so problems from the API land beside their fields;
 * the outputs sit beside the plot, each with its caution. A scenario with observations, `fit`
 * or `propose` opens the panel.
 */
import '../levels.css';
import { clockLabel } from '../../models/levels/clock.ts';
import type { ScenarioNca } from '../../models/levels/nca-scenario.ts';
import { quantitySlots } from '../../models/fitting/quantities.ts';
import type { Proposal, ProposeResult } from '../../models/regimen/propose.ts';
import type { SimulationResultJson } from '../../models/result/result-format.ts';
import type { Scenario } from '../../models/scenario/schema.ts';
import { fmt } from '../../models/result/summary-text.ts';
import { byId, fieldId, findByFocusKey, focusKey, h } from './dom.ts';
import { selectField } from './fields.ts';
import { FitView, fitClockAt } from './fit-view.ts';
import { postFit, postNca, postPropose, type FitAnswer, type LevelsOutcome } from './levels-api.ts';
import { LevelsImport } from './levels-import.ts';
import { ncaTables, cautionNote, forgetTypedTerminals, markTerminalProblems, type TerminalHooks } from './levels-tables.ts';
import type { FormHooks } from './model-form.ts';
import type { PanelErrors } from './population-panel.ts';
import { renderProposals } from './propose-view.ts';
import type { ScenarioDoc, ScenarioStore } from './store.ts';

/** What the panel asks of the page around it. */
export interface LevelsPage {
  /** Runs the simulation of the form (as the Run button does). */
  run(): Promise<void>;
  /** Keeps the current run as the compare reference. */
  keepReference(): void;
  /** Loads a scenario into the form (asking first over unsaved changes) and runs it; false when the user kept the screen. */
  openScenario(doc: ScenarioDoc, name: string): Promise<boolean>;
}

export interface LevelsPanel {
  /** A run was shown: its observations' clock times go beside the table's rows. */
  resultShown(result: SimulationResultJson | null): void;
}

declare global {
  interface Window {
    __tidemarkLevels: { readonly nca: ScenarioNca | null; readonly fit: FitAnswer | null; readonly proposals: ProposeResult | null; readonly sent: { nca: unknown; fit: unknown; propose: unknown } };
  }
}

type Kind = 'nca' | 'fit' | 'propose';

/** The observation's fields as the table shows them, in order. */
const columns: { key: string; label: string; kind: 'text' | 'check' }[] = [
  { key: 'time', label: 'Time (under it: elapsed, clock)', kind: 'text' },
  { key: 'compartment', label: 'Compartment', kind: 'text' },
  { key: 'concentration', label: 'Level', kind: 'text' },
  { key: 'belowLimit', label: 'Below limit', kind: 'check' },
  { key: 'limit', label: 'Limit', kind: 'text' },
  { key: 'subject', label: 'Subject', kind: 'text' },
  { key: 'label', label: 'Label', kind: 'text' },
];

const isRecord = (v: unknown): v is Record<string, unknown> => typeof v === 'object' && v !== null && !Array.isArray(v);
const text = (v: unknown): string => (v === undefined || v === null ? '' : typeof v === 'string' ? v : String(v));

export function setUpLevels(store: ScenarioStore, hooks: FormHooks, errors: PanelErrors, page: LevelsPage): LevelsPanel {
  const details = byId<HTMLDetailsElement>('levels-details');
  const formHost = byId('levels-form');
  const resultsPanel = byId('levels-results');
  const outputs: Record<Kind, HTMLElement> = {
    nca: h('section', { class: 'levels-output', 'data-testid': 'levels-nca', 'aria-label': 'Non-compartmental figures', hidden: true }),
    fit: h('section', { class: 'levels-output', 'data-testid': 'levels-fit', 'aria-label': 'Fit to the levels', hidden: true }),
    propose: h('section', { class: 'levels-output', 'data-testid': 'levels-propose', 'aria-label': 'Proposed regimens', hidden: true }),
  };
  byId('levels-output').replaceChildren(outputs.nca, outputs.fit, outputs.propose);
  const fitView = new FitView();
  const shown: { nca: ScenarioNca | null; fit: FitAnswer | null; proposals: ProposeResult | null } = { nca: null, fit: null, proposals: null };
  const sent: Record<Kind, unknown> = { nca: null, fit: null, propose: null };
  const inFlight: Record<Kind, AbortController | null> = { nca: null, fit: null, propose: null };
  let lastResult: SimulationResultJson | null = null;
  /** The line under each observation's time that shows its elapsed and clock time from the last run. */
  let whenCells: HTMLElement[] = [];
  const statuses: Record<Kind, HTMLElement> = {
    nca: h('p', { class: 'run-status', role: 'status', 'aria-live': 'polite', 'data-testid': 'levels-nca-status' }, 'Not computed yet.'),
    fit: h('p', { class: 'run-status', role: 'status', 'aria-live': 'polite', 'data-testid': 'levels-fit-status' }, 'Not fitted yet.'),
    propose: h('p', { class: 'run-status', role: 'status', 'aria-live': 'polite', 'data-testid': 'levels-propose-status' }, 'Not proposed yet.'),
  };

  window.__tidemarkLevels = Object.freeze({
    get nca() {
      return shown.nca;
    },
    get fit() {
      return shown.fit;
    },
    get proposals() {
      return shown.proposals;
    },
    get sent() {
      return { ...sent };
    },
  });

  // ---- the observations ----
  // A levels CSV read into the inline list; then the table is redrawn and the run shows the points.
  const importer = new LevelsImport(store, (words) => {
    details.open = true;
    render('key:levels-import-choose');
    hooks.announce(words);
    void page.run();
  });
  const observations = (): unknown[] => {
    const o = store.scenario.observations;
    return Array.isArray(o) ? o : [];
  };

  function observationTable(): HTMLElement {
    const list = observations();
    whenCells = [];
    const rows = list.map((o, i) => {
      const obs = isRecord(o) ? o : {};
      // Elapsed time and clock time of the last run, under the time as written.
      const when = h('div', { class: 'levels-when' });
      whenCells.push(when);
      const remove = h('button', { type: 'button', class: 'quiet', 'data-focus-key': `remove-observation-${i}`, 'aria-label': `Remove observation ${i + 1}` }, '×');
      remove.addEventListener('click', () => {
        store.mutate((doc) => {
          const arr = doc.observations as unknown[];
          arr.splice(i, 1);
          if (arr.length === 0) delete doc.observations;
        });
        render('key:add-observation');
      });
      return h('tr', {}, h('th', { scope: 'row' }, String(i + 1)), ...columns.map((c) => h('td', {}, cell(`observations[${i}].${c.key}`, obs[c.key], c, i), c.key === 'time' ? when : null)), h('td', {}, remove));
    });
    const add = h('button', { type: 'button', 'data-focus-key': 'add-observation', 'data-testid': 'levels-add-observation' }, 'Add a level');
    add.addEventListener('click', () => {
      const first = store.compartments.find((c) => c.volume !== undefined);
      store.mutate((doc) => {
        if (!Array.isArray(doc.observations)) doc.observations = [];
        (doc.observations as unknown[]).push({ time: '', compartment: typeof first?.id === 'string' ? first.id : '', concentration: '' });
      });
      render(`path:observations[${observations().length - 1}].time`);
    });
    const table = h(
      'div',
      { class: 'table-scroll', 'data-path': 'observations' },
      h(
        'table',
        { class: 'fig levels-table levels-observations', 'data-testid': 'levels-observations' },
        h('caption', {}, `Observations (${list.length}): a time as a quantity ("23.75 h") or an ISO 8601 date-time; a level with its unit or in the scenario's concentration unit`),
        h('thead', {}, h('tr', {}, h('th', { scope: 'col' }, '#'), ...columns.map((c) => h('th', { scope: 'col' }, c.label)), h('th', { scope: 'col' }, h('span', { class: 'visually-hidden' }, 'Remove')))),
        h('tbody', {}, ...rows),
      ),
    );
    return h('div', {}, list.length ? table : h('p', { class: 'note' }, 'No observations in this scenario. Add levels here, import a CSV file of them, or write them in the JSON under "observations".'), h('div', { class: 'run-row' }, add));
  }

  function cell(path: string, value: unknown, c: (typeof columns)[number], i: number): HTMLElement {
    const label = `Observation ${i + 1}, ${c.label.toLowerCase()}`;
    if (c.kind === 'check') {
      const box = h('input', { type: 'checkbox', id: fieldId(path), 'data-path': path, 'aria-label': label, checked: value === true });
      box.addEventListener('change', () => store.set(path, box.checked ? true : undefined));
      return box;
    }
    const input = h('input', { type: 'text', id: fieldId(path), 'data-path': path, 'aria-label': label, value: text(value), autocomplete: 'off', spellcheck: 'false', class: `levels-input levels-input-${c.key}` });
    input.addEventListener('input', () => {
      const v = input.value.trim();
      // A plain number stays a number (the scenario's unit); anything else as typed, for the server to read or name.
      const required = c.key === 'time' || c.key === 'compartment';
      store.set(path, v === '' ? (required ? '' : undefined) : /^-?\d+(\.\d+)?(e[-+]?\d+)?$/i.test(v) && c.key !== 'subject' && c.key !== 'label' ? Number(v) : input.value);
    });
    return input;
  }

  function fillWhen(): void {
    const r = lastResult;
    const list = observations();
    whenCells.forEach((td, i) => {
      // A run lists the observations in the scenario's order, each named by its path or, for a
      // row read from a file, by its source line (models/scenario/observations.ts).
      const row = list[i];
      const name = isRecord(row) && typeof row.source === 'string' ? row.source : `observations[${i}]`;
      const o = r?.observations?.[i];
      if (!r || !o || o.path !== name) {
        td.textContent = '—';
        return;
      }
      const clock = r.clock ? clockLabel(o.time * r.clock.hoursPerTimeUnit, r.clock) : null;
      td.textContent = `${fmt(o.time)} ${r.units.time}${clock ? ` (${clock})` : ''}`;
    });
  }

  // ---- the fit's settings ----
  const fitBlock = (): Record<string, unknown> => (isRecord(store.scenario.fit) ? store.scenario.fit : {});
  const estimateList = (): string[] => {
    const e = fitBlock().estimate;
    return Array.isArray(e) ? e.filter((x): x is string => typeof x === 'string') : [];
  };

  function setEstimate(list: string[]): void {
    store.mutate((doc) => {
      const fit = isRecord(doc.fit) ? doc.fit : {};
      if (list.length) fit.estimate = list;
      else delete fit.estimate;
      if (Object.keys(fit).length) doc.fit = fit;
      else delete doc.fit;
    });
  }

  function fitSettings(): HTMLElement {
    const doc = store.scenario;
    const slots = quantitySlots({ ...doc, compartments: store.compartments, transfers: store.transfers, doses: store.doses } as unknown as Scenario);
    const chosen = estimateList();
    const known = new Set<string>();
    const boxes = slots.map((q) => {
      const entry = q.name ?? q.path;
      const index = chosen.findIndex((c) => c === q.name || c.replace(/\s+/g, '') === q.path);
      known.add(entry);
      if (index >= 0) known.add(chosen[index]);
      return estimateBox(entry, q.name ? `${q.name}` : q.path, q.name ? q.path : null, index, chosen);
    });
    // Entries that name no quantity stay listed (checked), so the user can see and remove them.
    chosen.forEach((c, i) => {
      if (!known.has(c)) boxes.push(estimateBox(c, c, 'not a quantity of this model', i, chosen));
    });
    const objective = selectField(store, { path: 'fit.objective', label: 'Objective', absentValue: '', options: [['', 'Default (MAP when the population gives a prior)'], ['wls', 'Weighted least squares'], ['map', 'Maximum a posteriori (the population as prior)']] });
    const weighting = selectField(store, { path: 'fit.weighting', label: 'Weighting (least squares)', absentValue: '', options: [['', 'Default'], ['none', 'Equal weights'], ['1/y', '1/y'], ['1/y2', '1/y²'], ['residual', 'From the residual error model']] });
    const belowLimit = selectField(store, { path: 'fit.belowLimit', label: 'Levels below the limit', absentValue: '', options: [['', 'Excluded (default)'], ['exclude', 'Excluded'], ['censored', 'Counted as censored']] });
    return h(
      'div',
      { class: 'levels-fit-settings' },
      h('fieldset', { class: 'levels-estimate', 'data-path': 'fit.estimate', 'data-testid': 'levels-estimate' }, h('legend', {}, 'Quantities to estimate (they start from their typical values)'), ...(boxes.length ? boxes : [h('p', { class: 'note' }, 'The model has no quantities to estimate.')])),
      h('div', { class: 'levels-fields' }, objective, weighting, belowLimit),
    );
  }

  function estimateBox(entry: string, label: string, hint: string | null, index: number, chosen: string[]): HTMLElement {
    const id = `levels-estimate-${entry.replace(/[^A-Za-z0-9]+/g, '-')}`;
    const box = h('input', { type: 'checkbox', id, 'data-focus-key': id, 'data-testid': id, checked: index >= 0, ...(index >= 0 ? { 'data-path': `fit.estimate[${index}]` } : {}) });
    box.addEventListener('change', () => {
      const next = box.checked ? [...chosen, entry] : chosen.filter((_, i) => i !== index);
      setEstimate(next);
      render(`key:${id}`);
    });
    return h('span', { class: 'levels-check' }, box, h('label', { for: id }, label, hint ? h('span', { class: 'unit' }, ` ${hint}`) : ''));
  }

  // ---- the proposals' settings, as written ----
  /** propose.basis: for the scenario's own subject, or for the virtual population (which needs a population section). */
  function basisField(basis: unknown): HTMLElement {
    const hasPopulation = isRecord(store.scenario.population);
    const field = selectField(store, {
      path: 'propose.basis',
      label: 'Propose for',
      absentValue: 'typical',
      options: [['typical', 'the typical subject'], ['population', 'the virtual population']],
      hint: hasPopulation ? 'The virtual population ranks each regimen by the share of its subjects meeting every target.' : 'The virtual population needs a population section (variability) in the scenario.',
    });
    const select = field.querySelector('select') as HTMLSelectElement;
    select.dataset.testid = 'levels-propose-basis';
    // Left enabled when "population" is written without a population section, so it can be switched back.
    if (!hasPopulation && basis !== 'population') select.disabled = true;
    return field;
  }

  function proposeSettings(): HTMLElement {
    const p = store.scenario.propose;
    if (!isRecord(p)) return h('p', { class: 'note', 'data-path': 'propose' }, 'No "propose" block in this scenario: write one in the JSON with the strengths (or amounts), the intervals allowed and the targets.');
    const list = (v: unknown) => (Array.isArray(v) ? v.map((x) => text(x)).join(', ') : '—');
    const targets = Array.isArray(p.targets) ? p.targets.map((t) => JSON.stringify(t).replace(/"/g, '').replace(/,/g, ', ').replace(/:/g, ': ')) : [];
    const rows: [string, string, string][] = [
      ['Dose line', `${Number(p.line ?? 0) + 1}`, 'propose.line'],
      [p.amounts ? 'Amounts' : 'Strengths', p.amounts ? list(p.amounts) : `${list(p.strengths)}${p.maxUnits !== undefined ? ` (at most ${text(p.maxUnits)} units)` : ''}`, p.amounts ? 'propose.amounts' : 'propose.strengths'],
      ['Intervals', list(p.intervals), 'propose.intervals'],
      ['Infusion durations', p.durations ? list(p.durations) : 'the line\u2019s own', 'propose.durations'],
      ['Loading dose', p.loading === true ? `yes, rounded ${text(p.rounding ?? 'nearest')}` : 'no', 'propose.loading'],
    ];
    return h(
      'div',
      { 'data-path': 'propose', 'data-testid': 'levels-propose-settings' },
      basisField(p.basis),
      h('dl', { class: 'levels-settings' }, ...rows.flatMap(([k, v, path]) => [h('dt', {}, k), h('dd', { 'data-path': path }, v)])),
      h('p', { class: 'levels-subhead' }, 'Targets'),
      targets.length ? h('ol', { class: 'levels-targets', 'data-path': 'propose.targets' }, ...targets.map((t, i) => h('li', { 'data-path': `propose.targets[${i}]` }, t))) : h('p', { class: 'note' }, 'No targets: every regimen meets them; the ranking then follows doses per day and amount.'),
      h('p', { class: 'note' }, 'Edit the strengths, intervals and targets in the JSON (Save JSON, edit, Open JSON).'),
    );
  }

  // ---- the actions ----
  function actionRow(kind: Kind, label: string, extra?: HTMLElement): HTMLElement {
    const b = h('button', { type: 'button', class: 'primary', 'data-testid': `levels-${kind}-run`, 'data-focus-key': `levels-${kind}-run` }, label);
    b.addEventListener('click', () => void act(kind, b));
    return h('div', { class: 'run-row' }, extra ?? null, b, statuses[kind]);
  }

  const caller: Record<Kind, (scenario: unknown, signal: AbortSignal) => Promise<LevelsOutcome<unknown>>> = {
    nca: (s, signal) => postNca(s, signal),
    fit: postFit,
    propose: postPropose,
  };
  const working: Record<Kind, string> = { nca: 'Computing the figures…', fit: 'Fitting…', propose: 'Searching the regimens…' };

  /** nca.terminal problems with no table to hold their control: listed under the NCA heading (cleared by the next run). */
  const terminalProblems = h('p', { class: 'field-error', role: 'alert', 'data-testid': 'levels-nca-terminal-problems', 'data-path': 'nca.terminal', hidden: true });
  function showTerminalProblems(problems: readonly { path: string; message: string }[]): void {
    const mine = problems.filter((q) => q.path === 'nca.terminal' || q.path.startsWith('nca.terminal['));
    terminalProblems.textContent = mine.map((q) => `${q.path}: ${q.message}`).join(' ');
    terminalProblems.hidden = mine.length === 0;
  }

  async function act(kind: Kind, button: HTMLButtonElement): Promise<void> {
    if (kind === 'nca') showTerminalProblems([]);
    inFlight[kind]?.abort();
    const controller = new AbortController();
    inFlight[kind] = controller;
    const scenario = structuredClone(store.scenario);
    const status = statuses[kind];
    status.textContent = working[kind];
    button.setAttribute('aria-busy', 'true');
    const started = performance.now();
    const outcome = await caller[kind](scenario, controller.signal);
    if (inFlight[kind] !== controller) return;
    inFlight[kind] = null;
    button.removeAttribute('aria-busy');
    const ms = Math.round(performance.now() - started);
    switch (outcome.kind) {
      case 'ok':
        errors.clear();
        sent[kind] = scenario;
        show(kind, outcome.value);
        status.textContent = `Done in ${fmt(ms)} ms; shown beside the plot.`;
        hooks.announce(doneWords[kind]);
        break;
      case 'invalid':
        details.open = true;
        errors.showInvalid(outcome.problems);
        // Terminal-line problems go beside their control when a table shows it, else beside the section's heading.
        if (kind === 'nca' && !markTerminalProblems(outputs.nca, outcome.problems, ncaTerminalHooks())) showTerminalProblems(outcome.problems);
        status.textContent = 'Not computed: the scenario has problems, listed under the run button and beside the fields.';
        break;
      case 'failed':
        errors.showFailure(outcome.problems);
        status.textContent = `The computation did not finish: ${outcome.problems.map((p) => p.message).join('; ')}`;
        break;
      case 'message':
        errors.showMessage(outcome.text, 'Not computed');
        status.textContent = 'Not computed.';
        break;
      case 'aborted':
        return;
    }
  }
  const doneWords: Record<Kind, string> = { nca: 'Non-compartmental figures shown beside the plot.', fit: 'Fit shown beside the plot.', propose: 'Proposed regimens shown beside the plot.' };

  function show(kind: Kind, value: unknown): void {
    const host = outputs[kind];
    if (kind === 'nca') {
      const nca = value as ScenarioNca;
      shown.nca = nca;
      host.replaceChildren(h('h3', {}, 'Non-compartmental figures'), cautionNote('levels-nca-caution', 'The figures describe the levels given.'), ...ncaTables(nca, ncaTerminalHooks()));
    } else if (kind === 'fit') {
      const fit = value as FitAnswer;
      shown.fit = fit;
      const inner = h('div', {});
      host.replaceChildren(h('h3', {}, 'Fit to the levels'), inner);
      // Clock times from the scenario the fit was computed on, not from the last run, which may be older.
      fitView.render(inner, fit, () => void openFitted(fit), fitClockAt(sent.fit, fit.units.time));
    } else {
      const proposals = value as ProposeResult;
      shown.proposals = proposals;
      const inner = h('div', {});
      host.replaceChildren(h('h3', {}, 'Proposed regimens'), inner);
      renderProposals(inner, proposals, (p) => void tryInCompare(p, proposals));
    }
    host.hidden = false;
    resultsPanel.hidden = false;
  }

  async function openFitted(fit: FitAnswer): Promise<void> {
    if (!isRecord(fit.fittedScenario)) return;
    const doc = structuredClone(fit.fittedScenario) as ScenarioDoc;
    const opened = await page.openScenario(doc, `${text(doc.title) || 'fitted scenario'} (fitted)`);
    if (opened) hooks.announce('Opened the fitted scenario: the estimates are its typical values. Save it to keep it.');
  }

  /** Keeps the run on screen as the reference, writes the proposal into its dose line and runs. */
  async function tryInCompare(p: Proposal, result: ProposeResult): Promise<void> {
    const block = store.scenario.propose;
    const line = isRecord(block) && typeof block.line === 'number' ? block.line : 0;
    const dose = store.doses[line];
    if (!dose) {
      errors.showMessage(`The proposals are for dose line ${line + 1}, which the form no longer has.`, 'Not tried');
      return;
    }
    page.keepReference();
    const u = result.units;
    const base = `doses[${line}]`;
    store.set(`${base}.amount`, `${p.amount} ${u.amount}`);
    store.set(`${base}.every`, `${p.interval} ${u.time}`);
    if (p.duration > 0) {
      store.set(`${base}.duration`, `${p.duration} ${u.time}`);
      if (dose.rate !== undefined) store.set(`${base}.rate`, undefined);
    } else if (dose.duration !== undefined) store.set(`${base}.duration`, undefined);
    hooks.rerender();
    const loading = p.loading ? ` Its loading dose of ${fmt(p.loading.amount)} ${u.amount} is not added to the form; add it as a dose line to see it.` : '';
    hooks.announce(`Dose line ${line + 1} set to ${fmt(p.amount)} ${u.amount} every ${fmt(p.interval)} ${u.time}${p.duration > 0 ? ` over ${fmt(p.duration)} ${u.time}` : ''}; the previous run is kept as the reference.${loading}`);
    statuses.propose.textContent = `Trying rank ${p.rank} in compare: dose line ${line + 1} set, the previous run kept as the reference.${loading}`;
    await page.run();
  }

  // ---- the terminal line of an NCA profile, fixed by the user: the profile's own entry of nca.terminal ----
  function ncaTerminalHooks(): TerminalHooks {
    const isOwn = (e: unknown, subject: string | null, compartment: string) => isRecord(e) && (e.subject ?? null) === subject && e.compartment === compartment;
    const entries = (): unknown[] => (isRecord(store.scenario.nca) && Array.isArray(store.scenario.nca.terminal) ? store.scenario.nca.terminal : []);
    /** Sets (or with undefined removes) the profile's own entry; an empty list and an empty section go. */
    const write = (subject: string | null, compartment: string, from: string | number | undefined) => {
      store.mutate((doc) => {
        const nca = isRecord(doc.nca) ? doc.nca : {};
        const list: unknown[] = Array.isArray(nca.terminal) ? nca.terminal : [];
        const i = list.findIndex((e) => isOwn(e, subject, compartment));
        if (from === undefined) {
          if (i >= 0) list.splice(i, 1);
        } else if (i >= 0) list[i] = { ...(list[i] as Record<string, unknown>), from };
        else list.push({ ...(subject !== null ? { subject } : {}), compartment, from });
        if (list.length) nca.terminal = list;
        else delete nca.terminal;
        if (Object.keys(nca).length) doc.nca = nca;
        else delete doc.nca;
      });
      const run = formHost.querySelector<HTMLButtonElement>('[data-testid="levels-nca-run"]');
      if (run) void act('nca', run);
    };
    return {
      own(subject, compartment) {
        const list = entries();
        const i = list.findIndex((e) => isOwn(e, subject, compartment));
        return i < 0 ? null : { path: `nca.terminal[${i}]`, from: text((list[i] as Record<string, unknown>).from) };
      },
      // A plain number stays a number (the scenario's time unit); anything else as typed, for the server to read or name.
      fix: (subject, compartment, typed) => write(subject, compartment, /^-?\d+(\.\d+)?(e[-+]?\d+)?$/i.test(typed.trim()) ? Number(typed.trim()) : typed.trim()),
      automatic(subject, compartment) {
        // Removing the own entry is enough unless a wider one (no subject, or no compartment) would still fix the line.
        const wider = entries().some((e) => isRecord(e) && !isOwn(e, subject, compartment) && (e.subject === undefined || e.subject === subject) && (e.compartment === undefined || e.compartment === compartment));
        write(subject, compartment, wider ? 'automatic' : undefined);
      },
    };
  }

  // ---- rendering ----
  function render(focusAfter?: string): void {
    const key = focusAfter ?? focusKey(document.activeElement);
    // The area rule is the scenario's nca.rule (absent: linear-up/log-down), so a saved scenario keeps it.
    const rule = selectField(store, { path: 'nca.rule', label: 'Areas by', absentValue: 'linear-up-log-down', options: [['linear-up-log-down', 'linear-up/log-down trapezoids'], ['linear', 'linear trapezoids']] });
    formHost.replaceChildren(
      h('h3', { class: 'sub' }, 'Observations'),
      observationTable(),
      importer.element,
      h('h3', { class: 'sub' }, 'Non-compartmental analysis'),
      terminalProblems,
      actionRow('nca', 'Non-compartmental figures', rule),
      h('h3', { class: 'sub' }, 'Individual parameters'),
      fitSettings(),
      actionRow('fit', 'Fit to the levels'),
      h('h3', { class: 'sub' }, 'Next regimen'),
      proposeSettings(),
      actionRow('propose', 'Propose regimens'),
      h('p', { class: 'note' }, 'Every output here is a model output for review by a clinician, not dosing advice.'),
    );
    fillWhen();
    if (key) findByFocusKey(formHost, key)?.focus();
  }

  function clearOutputs(): void {
    for (const kind of ['nca', 'fit', 'propose'] as const) {
      inFlight[kind]?.abort();
      inFlight[kind] = null;
      outputs[kind].replaceChildren();
      outputs[kind].hidden = true;
      sent[kind] = null;
    }
    fitView.clear();
    showTerminalProblems([]);
    shown.nca = shown.fit = shown.proposals = null;
    resultsPanel.hidden = true;
    statuses.nca.textContent = 'Not computed yet.';
    statuses.fit.textContent = 'Not fitted yet.';
    statuses.propose.textContent = 'Not proposed yet.';
  }

  store.subscribe((kind) => {
    if (kind === 'replaced') {
      const s = store.scenario;
      details.open = observations().length > 0 || s.fit !== undefined || s.propose !== undefined;
      clearOutputs();
      importer.reset();
      forgetTypedTerminals();
      lastResult = null;
      render();
    } else if (kind === 'structure' && !formHost.contains(document.activeElement)) {
      // Quantities added or removed elsewhere change the fit's choices.
      render();
    }
  });
  render();

  return {
    resultShown(result) {
      lastResult = result;
      fillWhen();
    },
  };
}
