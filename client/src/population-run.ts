/**
 * Running a population from the page: the scenario is posted, the run is polled for its
 * progress (a progress bar, with Cancel once it has taken about a second), and the result is
 * drawn. Problems go beside their fields like a simulation's; what was typed stays.
 */
import type { PopulationResult } from '../../models/population/summary.ts';
import type { Problem } from './api.ts';
import { h } from './dom.ts';
import { cancelPopulation, pollPopulation, startPopulation } from './population-api.ts';
import { PopulationView } from './population-results.ts';
import type { ScenarioStore } from './store.ts';

export interface RunHooks {
  announce(message: string): void;
  showInvalid(problems: Problem[]): void;
  showFailure(problems: Problem[]): void;
  showMessage(text: string, title: string): void;
  clearErrors(): void;
}

/** Cancel appears for runs that last longer than this (ms); shorter ones finish before it could be used. */
const cancelAfterMs = 1000;
const pollMs = 250;

export class PopulationRun {
  result: PopulationResult | null = null;
  /** The scenario exactly as sent for the shown result. */
  sent: unknown = null;
  private id: string | null = null;
  /** Each run gets a number; a poll of an older run is dropped. */
  private generation = 0;
  readonly view: PopulationView;
  private readonly progress: HTMLProgressElement;
  private readonly progressBox: HTMLElement;
  private readonly cancelButton: HTMLButtonElement;

  constructor(
    private readonly store: ScenarioStore,
    private readonly button: HTMLButtonElement,
    private readonly status: HTMLElement,
    private readonly panel: HTMLElement,
    output: HTMLElement,
    progressHost: HTMLElement,
    private readonly hooks: RunHooks,
  ) {
    this.view = new PopulationView(output);
    this.progress = h('progress', { id: 'population-progress', 'data-testid': 'population-progress', max: 1, value: 0 });
    this.cancelButton = h('button', { type: 'button', class: 'quiet', 'data-testid': 'population-cancel' }, 'Cancel');
    this.cancelButton.addEventListener('click', () => void this.cancel());
    this.progressBox = h('div', { class: 'population-progress' }, h('label', { for: 'population-progress' }, 'Subjects done'), this.progress, this.cancelButton);
    this.progressBox.hidden = true;
    progressHost.replaceChildren(this.progressBox);
    button.addEventListener('click', () => void this.run());
  }

  get running(): boolean {
    return this.id !== null;
  }

  async run(): Promise<void> {
    if (this.id) await this.cancel();
    const generation = ++this.generation;
    const sent = structuredClone(this.store.scenario);
    this.status.textContent = 'Starting the population…';
    this.button.setAttribute('aria-busy', 'true');
    const started = await startPopulation(sent);
    if (generation !== this.generation) return;
    if (started.kind !== 'started') {
      this.button.removeAttribute('aria-busy');
      if (started.kind === 'invalid') {
        this.hooks.showInvalid(started.problems);
        this.status.textContent = 'Not run: the population has problems, listed above and beside the fields.';
      } else if (started.kind === 'failed') {
        this.hooks.showFailure(started.problems);
        this.status.textContent = 'The population could not be run.';
      } else {
        this.hooks.showMessage(started.text, 'The population did not run');
        this.status.textContent = 'Not run.';
      }
      return;
    }
    this.hooks.clearErrors();
    this.id = started.id;
    this.panel.hidden = false;
    const t0 = performance.now();
    this.progress.value = 0;
    this.cancelButton.hidden = true;
    this.progressBox.hidden = false;
    for (;;) {
      const state = await pollPopulation(started.id);
      if (generation !== this.generation) return;
      if (state.kind === 'running') {
        this.progress.max = Math.max(1, state.total);
        this.progress.value = state.done;
        this.status.textContent = `Running: ${state.done} of ${state.total} subjects.`;
        if (performance.now() - t0 > cancelAfterMs) this.cancelButton.hidden = false;
        await new Promise((r) => setTimeout(r, pollMs));
        if (generation !== this.generation) return;
        continue;
      }
      this.finish();
      if (state.kind === 'done') {
        this.result = state.result;
        this.sent = sent;
        this.view.show(state.result);
        const seconds = (performance.now() - t0) / 1000;
        this.status.replaceChildren(`Done: ${state.result.subjects} virtual subjects in ${seconds.toFixed(1)} s; `, h('a', { href: '#population-results' }, 'see the population results'), ' below the figures.');
        this.hooks.announce(`Population run done: ${state.result.subjects} virtual subjects.`);
      } else if (state.kind === 'failed') {
        this.hooks.showFailure(state.problems);
        this.status.textContent = 'The population could not be completed.';
      } else if (state.kind === 'cancelled') {
        this.status.textContent = 'Cancelled.';
      } else {
        this.hooks.showMessage(state.text, 'The population run stopped');
        this.status.textContent = 'Stopped.';
      }
      return;
    }
  }

  async cancel(): Promise<void> {
    const id = this.id;
    if (!id) return;
    this.generation++;
    this.finish();
    this.status.textContent = 'Cancelling…';
    await cancelPopulation(id);
    this.status.textContent = 'Cancelled.';
    this.hooks.announce('Population run cancelled.');
  }

  private finish(): void {
    this.id = null;
    this.progressBox.hidden = true;
    this.button.removeAttribute('aria-busy');
  }
}
