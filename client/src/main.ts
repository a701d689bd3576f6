/**
 * Tidemark page: wires the scenario store, the forms, the drawings, the API, the plot,
 * the figures and the file actions together. The page never simulates by itself: it asks
 * the server.
 */
import '../styles.css';
import type { SimulationResultJson } from '../../models/result/result-format.ts';
import { fmt } from '../../models/result/summary-text.ts';
import { scenarioFingerprint } from '../../models/scenario/fingerprint.ts';
import { doseLabelsOf } from '../../models/result/dose-words.ts';
import { fetchSample, fetchSamples, simulate } from './api.ts';
import { Compare } from './compare.ts';
import { renderDiagram } from './diagram.ts';
import { byId, findByFocusKey, focusKey, h } from './dom.ts';
import { ErrorPresenter } from './errors.ts';
import { refreshCompartmentSelects, textField } from './fields.ts';
import { renderFigures } from './figures.ts';
import { exportCurves, openScenario, saveScenario } from './io.ts';
import { ModelForm, type FormHooks } from './model-form.ts';
import { manyPointsWarning, OutputForm } from './output-form.ts';
import { PlotControls } from './plot-controls.ts';
import { PlotView } from './plot.ts';
import { RegimenForm } from './regimen-form.ts';
import { addReportButton, type IssueTarget } from './report.ts';
import { emptyScenario, formProblem, ScenarioStore, type ScenarioDoc } from './store.ts';
import { renderPrintSummary } from './print-summary.ts';
import { setUpPopulation } from './population-panel.ts';
import { covariateTableKept } from './population-table.ts';
import { setUpLevels } from './levels-panel.ts';
import { setSubjectOutcome, subjectOutcome } from './covariate-relations.ts';
import { SubjectForm } from './subject-form.ts';
import '../subject.css';
import { renderTimeline } from './timeline.ts';
import { browserStorage, readDraft, showDraftBanner, WorkTracker, type Draft, type Origin } from './draft.ts';
import { LibraryPanel } from './library.ts';
import { recordQuery } from './library-api.ts';
import { setUpLibraryHeader, StoreAccess } from './library-header.ts';
import { Saver, type PageShell } from './library-save.ts';
import { rememberedAuthor } from './save-dialog.ts';
import '../library.css';

const defaultSample = 'brennock-oral-bid';

const store = new ScenarioStore();
const formRoot = byId<HTMLFormElement>('scenario-form');
const notice = byId('notice');
const runButton = byId<HTMLButtonElement>('run');
const runStatus = byId('run-status');
const staleNote = byId('stale-note');
const sampleSelect = byId<HTMLSelectElement>('sample-select');
const fileInput = byId<HTMLInputElement>('open-json');
const exportButton = byId<HTMLButtonElement>('export-csv');
const figuresHost = byId('figures');
const errors = new ErrorPresenter(formRoot, byId('error-summary'), store);

// A draft kept from an earlier visit is read before anything is opened, and held (nothing is
// written over it) until the user restores or discards it.
const storage = browserStorage();
const tracker = new WorkTracker(store, storage, (message) => announce(message));
tracker.held = readDraft(storage);
tracker.opened({ kind: 'new' });

/** The last successful run, the scenario exactly as sent, and the store revision it matches. */
let lastResult: SimulationResultJson | null = null;
let lastScenario: unknown = null;
let lastRevision = -1;

function announce(message: string): void {
  // Clearing first makes a repeated message be read again.
  notice.textContent = '';
  requestAnimationFrame(() => {
    notice.textContent = message;
  });
}

const hooks: FormHooks = {
  rerender(focusAfter) {
    const key = focusAfter ?? focusKey(document.activeElement);
    renderForms();
    errors.reapply();
    if (key) findByFocusKey(formRoot, key)?.focus();
  },
  announce,
  clearErrors: () => errors.clear(),
};

const modelForm = new ModelForm(store, byId('model-form'), hooks);
const regimenForm = new RegimenForm(store, byId('regimen-form'), hooks);
const outputForm = new OutputForm(store, byId('output-form'), hooks);
const population = setUpPopulation(store, hooks, errors);
const subjectForm = new SubjectForm(store, byId('subject-form'), hooks.rerender);
// The covariate source set aside (and the table's remembered units) is kept in the draft beside the scenario, not in it.
tracker.keepBeside('covariateTable', covariateTableKept(() => hooks.rerender()));

function renderScenarioFields(): void {
  const host = byId('scenario-fields');
  const description = store.scenario.description;
  host.replaceChildren(textField(store, { path: 'title', label: 'Title', required: true, wide: true, maxLength: 200 }));
  if (typeof description === 'string' && description) host.append(h('p', { class: 'description' }, description));
}

function renderForms(): void {
  renderScenarioFields();
  subjectForm.render();
  modelForm.render();
  regimenForm.render();
  outputForm.render();
  population.form.render();
  drawNow();
}

// ---- drawings, redrawn from the form as it changes (once per frame at most) ----
let drawPending = false;
function drawNow(): void {
  drawPending = false;
  renderDiagram(store, byId('diagram'));
  renderTimeline(store, byId('timeline'));
}
function scheduleDraw(): void {
  if (drawPending) return;
  drawPending = true;
  requestAnimationFrame(drawNow);
}

// The timeline is drawn at its shown width: redraw it when the column changes width.
{
  const host = byId('timeline');
  let lastWidth = host.clientWidth;
  new ResizeObserver(() => {
    if (host.clientWidth === lastWidth) return;
    lastWidth = host.clientWidth;
    scheduleDraw();
  }).observe(host);
}

function markStale(): void {
  staleNote.hidden = lastResult === null || store.revision === lastRevision;
}

store.subscribe((kind, path) => {
  if (kind === 'value' && path) {
    errors.clearField(path);
    if (/^compartments\[\d+\]\.(label|volume)$/.test(path)) refreshCompartmentSelects(store, formRoot);
  }
  if (kind === 'replaced') {
    population.replaced();
    // A scenario that describes its subject opens the Subject section; one without folds it.
    byId<HTMLDetailsElement>('subject-details').open = store.scenario.subject !== undefined;
    setSubjectOutcome(null, store.units);
    renderForms();
  }
  else scheduleDraw();
  markStale();
});

// ---- plot, figures, compare ----
const plot = new PlotView(byId<HTMLCanvasElement>('plot'));
const compare = new Compare(
  () => (lastResult ? { result: lastResult, scenario: lastScenario } : null),
  (message) => {
    announce(message);
    showResult();
  },
);
const controls = new PlotControls(() => showResult());

function showResult(): void {
  const reference = compare.reference;
  plot.update({ current: lastResult, reference: reference?.result ?? null, selected: [...controls.selected], log: controls.log, range: controls.range(), steadyFrom: controls.steadyFrom() });
  renderFigures(figuresHost, lastResult, reference?.result ?? null, [...controls.selected], reference?.title ?? null, {
    current: doseLabelsOf(lastScenario),
    reference: doseLabelsOf(reference?.scenario),
  });
  renderPrintSummary(byId('print-summary'), lastScenario, lastResult);
  levels.resultShown(lastResult);
  exportButton.disabled = lastResult === null;
  compare.refresh();
  if (plot.referenceNote) byId('reference-note').append(` ${plot.referenceNote}`);
}

// ---- running ----
let inFlight: AbortController | null = null;
/** The store revision whose large output grid the user chose to run anyway. */
let largeGridAccepted = -1;

/**
 * A grid past the limit is not sent until the user says so: the status names the count and
 * offers "Run anyway" (a step typed in minutes while meaning hours gave 144,041 points).
 */
function holdLargeGrid(): boolean {
  const warning = manyPointsWarning(store.scenario, store.units);
  if (warning === null || largeGridAccepted === store.revision) return false;
  const anyway = h('button', { type: 'button', id: 'run-anyway', 'data-testid': 'run-anyway', class: 'quiet' }, 'Run anyway');
  anyway.addEventListener('click', () => {
    largeGridAccepted = store.revision;
    void run();
  });
  runStatus.replaceChildren(`Not run: ${warning} `, anyway);
  announce(`Not run: ${warning}`);
  return true;
}

async function run(): Promise<void> {
  if (holdLargeGrid()) return;
  inFlight?.abort();
  const controller = new AbortController();
  inFlight = controller;
  const revision = store.revision;
  const sent = structuredClone(store.scenario);
  runStatus.textContent = 'Running…';
  notice.textContent = '';
  runButton.setAttribute('aria-busy', 'true');
  const started = performance.now();
  // A run of exactly a stored version is recorded in the library.
  const link = tracker.stored;
  const record = link && !tracker.isDirty() ? { id: link.id, version: link.version } : undefined;
  const outcome = await simulate(sent, controller.signal, record);
  if (inFlight !== controller) return; // a newer run took over
  inFlight = null;
  runButton.removeAttribute('aria-busy');
  switch (outcome.kind) {
    case 'ok': {
      lastResult = outcome.result;
      lastScenario = sent;
      lastRevision = revision;
      errors.clear();
      // The subject's covariates and adjusted quantities go beside the fields and on the diagram.
      const hadSubject = subjectOutcome() !== null;
      setSubjectOutcome(lastResult.subject, store.units);
      if (hadSubject || lastResult.subject) hooks.rerender();
      controls.setResult(lastResult);
      showResult();
      const d = lastResult.diagnostics;
      const ms = Math.round(performance.now() - started);
      const warn = d.warnings.length ? ` ${d.warnings.length} warning${d.warnings.length > 1 ? 's' : ''} — see the figures.` : '';
      runStatus.textContent = `Done in ${fmt(ms)} ms: ${lastResult.times.length} reported times, ${d.path === 'exact' ? 'exact solution' : d.path === 'adaptive' ? 'adaptive integration' : 'fixed-step integration'}.${warn}`;
      // The report of this run carries the same fingerprint, so a reader can match the two.
      runStatus.append(' Scenario fingerprint ', h('code', { 'data-testid': 'run-fingerprint' }, scenarioFingerprint(sent)), '.');
      if (record && outcome.recorded && !outcome.recorded.startsWith('not recorded')) runStatus.append(` Recorded in the library as a run of version ${record.version}.`);
      break;
    }
    case 'invalid':
      errors.showInvalid(outcome.problems);
      runStatus.textContent = 'Not run: the scenario has problems, listed below and beside the fields.';
      break;
    case 'failed':
      errors.showFailure(outcome.problems);
      runStatus.textContent = 'The simulation could not be completed.';
      break;
    case 'message':
      errors.showMessage(outcome.text, 'The simulation did not run');
      runStatus.textContent = 'Not run.';
      break;
    case 'aborted':
      return;
  }
  markStale();
}

formRoot.addEventListener('submit', (ev) => {
  ev.preventDefault();
  void run();
});

// ---- loading scenarios ----
/** `base`: the fingerprint the scenario counts as saved against (default: its own). */
function load(doc: ScenarioDoc, origin: Origin, base?: string): void {
  errors.clear();
  store.replace(doc);
  tracker.opened(origin, base);
  lastRevision = -1;
  markStale();
}

/** Opening something over unsaved changes asks first. */
function confirmReplace(what: string): boolean {
  if (!tracker.isDirty()) return true;
  return confirm(`${what} replaces the scenario on screen, which has unsaved changes. They will be lost unless you save them first.\n\nReplace it?`);
}

/** `beforeRun` is called once the sample is on screen, before its run (the start offers kept work there). */
async function loadSample(id: string, beforeRun?: () => void): Promise<void> {
  const value = await fetchSample(id);
  const problem = value === null ? 'it could not be fetched from the server' : formProblem(value);
  if (problem) {
    errors.showMessage(`The sample “${id}” could not be opened: ${problem}.`, 'Sample not loaded');
    return;
  }
  load(value as ScenarioDoc, { kind: 'sample', id });
  sampleSelect.value = id;
  shownSample = id;
  announce(`Loaded the sample “${store.scenario.title ?? id}”.`);
  beforeRun?.();
  await run();
}

/** The sample the select shows, put back when the user keeps the screen instead of opening another. */
let shownSample = '';
sampleSelect.addEventListener('change', () => {
  if (!sampleSelect.value) return;
  if (!confirmReplace('Opening this sample')) {
    sampleSelect.value = shownSample;
    return;
  }
  void loadSample(sampleSelect.value);
});

byId('new-model').addEventListener('click', () => {
  if (!confirmReplace('A new model')) return;
  load(emptyScenario(), { kind: 'new' });
  sampleSelect.value = '';
  shownSample = '';
  lastResult = null;
  lastScenario = null;
  controls.setResult(null);
  showResult();
  runStatus.textContent = 'New empty scenario. Add compartments, transfers and doses, then run.';
  announce('Started a new, empty scenario.');
  findByFocusKey(formRoot, 'key:add-compartment')?.focus();
});

byId('open-json-button').addEventListener('click', () => fileInput.click());
fileInput.addEventListener('change', async () => {
  const file = fileInput.files?.[0];
  fileInput.value = '';
  if (!file) return;
  const opened = await openScenario(file);
  if (!opened.ok) {
    errors.showMessage(opened.message, 'File not opened');
    return;
  }
  if (!confirmReplace(`Opening “${opened.name}”`)) return;
  load(opened.doc, { kind: 'file', name: opened.name });
  sampleSelect.value = '';
  shownSample = '';
  announce(`Opened “${opened.name}”.`);
  await run();
});

byId('save-json').addEventListener('click', () => {
  saveScenario(store.scenario);
  announce('Saved the scenario as JSON.');
});

// The printable report of the scenario on screen, with the kept reference when there is one.
/**
 * The report is of the run on screen. When the form changed since that run, it is run first
 * (problems are shown as for any run and no report is made), so the PDF never disagrees with
 * the plot and figures the user reviewed; the status says so.
 */
async function scenarioForReport(): Promise<{ scenario: unknown; rerun: boolean } | null> {
  if (lastResult !== null && store.revision === lastRevision) return { scenario: lastScenario, rerun: false };
  await run();
  if (lastResult === null || store.revision !== lastRevision) return null;
  runStatus.append(' Run for the report, because the form had changed since the previous run: the plot, the figures and the report all show the changed form.');
  return { scenario: lastScenario, rerun: true };
}

// ---- the library: drafts, saving, the panel ----
function offerHeldDraft(): void {
  const draft = tracker.held;
  if (draft) showDraftBanner(byId('draft-banner'), draft, { restore: (d) => void restoreDraft(d), discard: discardDraft });
}

async function restoreDraft(draft: Draft): Promise<void> {
  if (!confirmReplace('Restoring the kept work')) {
    offerHeldDraft();
    return;
  }
  // Writing resumes with the restored scenario itself, still unsaved against its origin.
  tracker.held = null;
  load(structuredClone(draft.scenario), draft.origin, draft.baseFingerprint);
  tracker.restoreBeside(draft);
  sampleSelect.value = draft.origin.kind === 'sample' ? draft.origin.id : '';
  shownSample = sampleSelect.value;
  announce(`Restored the unsaved work “${store.scenario.title ?? 'untitled'}”.`);
  await run();
}

function discardDraft(): void {
  tracker.release(true);
  announce('Discarded the kept work.');
}

const storeAccess = new StoreAccess();
const shell: PageShell = {
  store,
  tracker,
  errors,
  announce,
  unavailable: () => storeAccess.message,
  async open(doc, origin, base, ask, message) {
    if (ask && !confirmReplace(`Opening “${origin.name}”`)) return false;
    load(doc, origin, base);
    sampleSelect.value = '';
    shownSample = '';
    announce(message);
    await run();
    return true;
  },
  offerHeldDraft,
};
const saver = new Saver(shell);
setUpLibraryHeader(shell, saver, storeAccess, new LibraryPanel(shell));

/**
 * A report is issued for a stored version: unsaved changes (or a scenario never stored) are
 * saved first. Without a library the report is made as before, unrecorded.
 */
async function issueFor(scenario: unknown): Promise<IssueTarget | null | 'stop'> {
  await storeAccess.settled();
  if (storeAccess.message !== null) return null;
  let link = tracker.stored;
  let fingerprint = tracker.base;
  if (link === null || tracker.isDirty()) {
    const saved = await saver.save('report');
    if (saved === null) return 'stop';
    link = saved;
    fingerprint = saved.fingerprint;
  }
  if (scenarioFingerprint(scenario) !== fingerprint) return null;
  return { name: link.name, version: link.version, fingerprint, query: recordQuery(link, rememberedAuthor()) };
}

addReportButton(exportButton, {
  scenario: scenarioForReport,
  reference: () => compare.reference?.scenario ?? null,
  announce,
  showInvalid: (problems) => errors.showInvalid(problems),
  showFailure: (problems) => errors.showFailure(problems),
  showMessage: (text, title) => errors.showMessage(text, title),
  issueFor,
});

exportButton.addEventListener('click', () => {
  if (!lastResult) {
    announce('Run the simulation first; the CSV holds its curves.');
    return;
  }
  exportCurves(lastResult);
  announce('Exported the curves as CSV.');
});

// ---- measured levels: observations, NCA, fit, proposals (tried in the compare overlay) ----
const levels = setUpLevels(store, hooks, errors, {
  run,
  keepReference: () => compare.keep(),
  async openScenario(doc, name) {
    if (!confirmReplace(`Opening “${name}”`)) return false;
    load(doc, { kind: 'file', name });
    sampleSelect.value = '';
    shownSample = '';
    await run();
    return true;
  },
});

// ---- read-only hooks for the browser tests ----
declare global {
  interface Window {
    __tidemark: { readonly lastResult: SimulationResultJson | null; readonly scenario: ScenarioDoc; readonly chart: PlotView['chart'] };
  }
}
window.__tidemark = Object.freeze({
  get lastResult() {
    return lastResult;
  },
  get scenario() {
    return store.scenario;
  },
  get chart() {
    return plot.chart;
  },
});

// ---- start: list the samples, open the default one and run it ----
async function start(): Promise<void> {
  renderForms();
  showResult();
  const samples = await fetchSamples();
  if (!samples) {
    errors.showMessage('The Tidemark server could not be reached, so the samples are not listed. Check that it is running, then reload the page.', 'Server not reachable');
  } else {
    for (const s of samples) sampleSelect.append(h('option', { value: s.id, title: s.description }, s.title));
    const first = samples.find((s) => s.id === defaultSample) ?? samples[0];
    if (first) await loadSample(first.id, offerKept);
  }
  offerKept();
}

/** Work kept from before is offered back (once) unless it is exactly what the page just opened. */
function offerKept(): void {
  const kept = tracker.held;
  if (kept === null || byId('draft-banner').hidden === false) return;
  if (scenarioFingerprint(kept.scenario) === scenarioFingerprint(store.scenario) && kept.origin.kind !== 'stored') tracker.release(true);
  else offerHeldDraft();
}

void start();
