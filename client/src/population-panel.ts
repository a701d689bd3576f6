/**
 * The population panel, folded away until used: its form (in the scenario form, so problems
 * find their fields), its run button and progress, and its results beside the plot. A
 * scenario that has a population opens the panel; one without leaves it folded.
 */
import '../population.css';
import type { PopulationResult } from '../../models/population/summary.ts';
import type { Problem } from './api.ts';
import { byId } from './dom.ts';
import type { FormHooks } from './model-form.ts';
import { PopulationForm } from './population-form.ts';
import { PopulationRun } from './population-run.ts';
import { forgetCovariateTable } from './population-table.ts';
import type { ScenarioStore } from './store.ts';

export interface PanelErrors {
  showInvalid(problems: Problem[]): void;
  showFailure(problems: Problem[]): void;
  showMessage(text: string, title: string): void;
  clear(): void;
}

export interface PopulationPanel {
  form: PopulationForm;
  run: PopulationRun;
  /** A new scenario was loaded: fold or open the panel to match, forget the old result. */
  replaced(): void;
}

declare global {
  interface Window {
    __tidemarkPopulation: { readonly result: PopulationResult | null; readonly sent: unknown; readonly chart: PopulationRun['view']['chart'] };
  }
}

export function setUpPopulation(store: ScenarioStore, hooks: FormHooks, errors: PanelErrors): PopulationPanel {
  const details = byId<HTMLDetailsElement>('population-details');
  const results = byId('population-results');
  const form = new PopulationForm(store, byId('population-form'), hooks);
  const run = new PopulationRun(store, byId<HTMLButtonElement>('run-population'), byId('population-status'), results, byId('population-output'), byId('population-progress-host'), {
    announce: (m) => hooks.announce(m),
    showInvalid: (p) => {
      details.open = true;
      errors.showInvalid(p);
    },
    showFailure: (p) => errors.showFailure(p),
    showMessage: (t, title) => errors.showMessage(t, title),
    clearErrors: () => errors.clear(),
  });
  window.__tidemarkPopulation = Object.freeze({
    get result() {
      return run.result;
    },
    get sent() {
      return run.sent;
    },
    get chart() {
      return run.view.chart;
    },
  });
  return {
    form,
    run,
    replaced() {
      details.open = store.scenario.population !== undefined;
      // What was set aside or half-pasted belonged to the scenario that was on screen.
      forgetCovariateTable();
      if (run.running) void run.cancel();
      run.result = null;
      run.sent = null;
      run.view.clear();
      results.hidden = true;
      byId('population-status').textContent = 'Not run yet.';
    },
  };
}
