/**
 * Problems from the server, shown where they belong: a message right after the input whose
 * data-path matches (aria-invalid, aria-describedby, role=alert), and a summary box listing
 * what has no input, computation failures and plain-sentence messages.
 */
import type { Problem } from './api.ts';
import { findByPath, h } from './dom.ts';
import { parsePath, type ScenarioStore } from './store.ts';

const fieldNames: Record<string, string> = {
  id: 'name',
  label: 'label',
  volume: 'volume',
  from: 'from',
  to: 'to',
  k: 'rate constant k',
  cl: 'clearance CL',
  vmax: 'Vmax',
  km: 'Km',
  into: 'compartment',
  amount: 'amount',
  at: 'first dose time',
  duration: 'infusion duration',
  rate: 'infusion rate',
  bioavailability: 'bioavailability',
  lag: 'lag time',
  every: 'dosing interval τ',
  count: 'number of doses',
  through: 'last dose time',
  end: 'end time',
  start: 'start time',
  step: 'step',
  times: 'extra output times',
  compartment: 'compartment',
  above: 'lower edge',
  below: 'upper edge',
  method: 'method',
  rtol: 'relative tolerance',
  atol: 'absolute tolerance',
  maxSteps: 'maximum steps',
};

/** "doses[0].amount" → "Dose line 1, amount". */
export function describePath(path: string, store: ScenarioStore): string {
  if (path === '') return 'Scenario';
  const t = parsePath(path);
  const rest = (from: number) =>
    t
      .slice(from)
      .map((x) => (typeof x === 'number' ? `#${x + 1}` : (fieldNames[x] ?? x)))
      .join(' ');
  const tail = (from: number) => (t.length > from ? `, ${rest(from)}` : '');
  if (t[0] === 'compartments' && typeof t[1] === 'number') {
    const id = store.compartments[t[1]]?.id;
    return `Compartment ${t[1] + 1}${typeof id === 'string' && id ? ` (${id})` : ''}${tail(2)}`;
  }
  if (t[0] === 'transfers' && typeof t[1] === 'number') return `Transfer ${t[1] + 1}${tail(2)}`;
  if (t[0] === 'doses' && typeof t[1] === 'number') return `Dose line ${t[1] + 1}${tail(2)}`;
  if (t[0] === 'output' && t[1] === 'thresholds' && typeof t[2] === 'number') return `Target window ${t[2] + 1}${tail(3)}`;
  if (t[0] === 'output') return `Output${tail(1)}`;
  if (t[0] === 'solver') return `Solver${tail(1)}`;
  if (t[0] === 'units') return `Units${tail(1)}`;
  if (t.length === 1 && typeof t[0] === 'string') return t[0] === 'title' ? 'Title' : t[0] === 'compartments' ? 'Compartments' : t[0] === 'doses' ? 'Doses' : t[0] === 'transfers' ? 'Transfers' : String(t[0]);
  return rest(0);
}

export class ErrorPresenter {
  /** Field problems of the last rejected run, re-attached after a form re-render. */
  private fieldProblems = new Map<string, string[]>();

  constructor(
    private readonly form: HTMLElement,
    private readonly summary: HTMLElement,
    private readonly store: ScenarioStore,
  ) {}

  /** Removes every field message and empties the summary. */
  clear(): void {
    this.fieldProblems.clear();
    this.detachAll();
    this.summary.replaceChildren();
    this.summary.hidden = true;
  }

  /** The user edited a field: its message goes (the summary stays until the next run). */
  clearField(path: string): void {
    if (!this.fieldProblems.has(path)) return;
    this.fieldProblems.delete(path);
    const el = findByPath(this.form, path);
    if (el) this.detach(el);
  }

  /** A 400: each problem beside its field; those without a field in the summary. */
  showInvalid(problems: Problem[]): void {
    this.clear();
    const unmatched: Problem[] = [];
    for (const p of problems) {
      if (findByPath(this.form, p.path)) this.fieldProblems.set(p.path, [...(this.fieldProblems.get(p.path) ?? []), p.message]);
      else unmatched.push(p);
    }
    this.reapply();
    const marked = [...this.fieldProblems.keys()];
    const parts: HTMLElement[] = [
      h('h2', {}, `The scenario needs attention (${problems.length} problem${problems.length === 1 ? '' : 's'})`),
    ];
    if (marked.length) {
      parts.push(
        h(
          'p',
          {},
          problems.length === 1
            ? 'It is marked beside its field:'
            : unmatched.length === 0
              ? 'Each is marked beside its field:'
              : `${problems.length - unmatched.length} ${problems.length - unmatched.length === 1 ? 'is' : 'are'} marked beside ${problems.length - unmatched.length === 1 ? 'its field' : 'their fields'}:`,
        ),
        h('ul', { class: 'jump-list' }, ...marked.map((path) => h('li', {}, this.jumpLink(path)))),
      );
    }
    if (unmatched.length) {
      parts.push(
        h('p', {}, marked.length ? 'Also:' : 'Problems:'),
        h('ul', {}, ...unmatched.map((p) => h('li', {}, h('strong', {}, describePath(p.path, this.store)), `: ${p.message}`))),
      );
    }
    this.showSummary(parts);
  }

  /** A 422 (numerical failure, time budget): the messages in the summary. */
  showFailure(problems: Problem[]): void {
    this.clear();
    this.showSummary([
      h('h2', {}, 'The simulation could not be completed'),
      h('ul', {}, ...problems.map((p) => h('li', {}, p.path ? h('strong', {}, `${describePath(p.path, this.store)}: `) : null, p.message))),
      h('p', { class: 'hint' }, 'A smaller span, a coarser output step or another solver setting may help.'),
    ]);
  }

  /** A plain sentence (network failure, busy server, unreadable file). */
  showMessage(text: string, title = 'Something needs attention'): void {
    this.clear();
    this.showSummary([h('h2', {}, title), h('p', {}, text)]);
  }

  /** Puts the stored field messages back after the forms were rebuilt. */
  reapply(): void {
    this.detachAll();
    for (const [path, messages] of this.fieldProblems) {
      const el = findByPath(this.form, path);
      if (el) this.attach(el, messages.join(' '));
    }
  }

  private showSummary(parts: HTMLElement[]): void {
    this.summary.replaceChildren(...parts);
    this.summary.hidden = false;
    this.summary.focus({ preventScroll: true });
    this.summary.scrollIntoView({ block: 'nearest' });
  }

  private jumpLink(path: string): HTMLElement {
    const a = h('a', { href: `#${findByPath(this.form, path)?.id ?? ''}` }, describePath(path, this.store));
    a.addEventListener('click', (ev) => {
      ev.preventDefault();
      const el = findByPath(this.form, path);
      if (!el) return;
      el.scrollIntoView({ block: 'center' });
      el.focus();
    });
    return a;
  }

  private attach(el: HTMLElement, message: string): void {
    const id = `${el.id || 'field'}-error`;
    const msg = h('p', { class: 'field-error', id, role: 'alert' }, message);
    el.after(msg);
    el.setAttribute('aria-invalid', 'true');
    const described = (el.getAttribute('aria-describedby') ?? '').split(/\s+/).filter((x) => x && x !== id);
    el.setAttribute('aria-describedby', [id, ...described].join(' '));
    const details = el.closest('details');
    if (details && !details.open) details.open = true;
  }

  private detach(el: HTMLElement): void {
    const next = el.nextElementSibling;
    const id = `${el.id || 'field'}-error`;
    if (next && next.classList.contains('field-error')) next.remove();
    el.removeAttribute('aria-invalid');
    const described = (el.getAttribute('aria-describedby') ?? '').split(/\s+/).filter((x) => x && x !== id);
    if (described.length) el.setAttribute('aria-describedby', described.join(' '));
    else el.removeAttribute('aria-describedby');
  }

  private detachAll(): void {
    this.form.querySelectorAll<HTMLElement>('[aria-invalid="true"]').forEach((el) => this.detach(el));
    this.form.querySelectorAll('.field-error').forEach((msg) => msg.remove());
  }
}
