/**
 * Compare: "Keep as reference" stores the current result with a copy of the scenario it
 * came from; later runs are drawn over it and the figures put both side by side.
 */
import type { SimulationResultJson } from '../../models/result/result-format.ts';
import { byId } from './dom.ts';

export interface Reference {
  result: SimulationResultJson;
  /** A deep copy of the scenario as it was run. */
  scenario: unknown;
  title: string;
  keptAt: Date;
}

export class Compare {
  reference: Reference | null = null;
  private readonly keepButton = byId<HTMLButtonElement>('keep-reference');
  private readonly clearButton = byId<HTMLButtonElement>('clear-reference');
  private readonly note = byId('reference-note');

  constructor(
    private readonly current: () => { result: SimulationResultJson; scenario: unknown } | null,
    private readonly onChange: (message: string) => void,
  ) {
    this.keepButton.addEventListener('click', () => this.keep());
    this.clearButton.addEventListener('click', () => this.clear());
    this.refresh();
  }

  keep(): void {
    const cur = this.current();
    if (!cur) return;
    this.reference = { result: cur.result, scenario: structuredClone(cur.scenario), title: cur.result.title, keptAt: new Date() };
    this.refresh();
    this.onChange('Kept this run as the reference. Change the scenario and run again to compare.');
  }

  clear(): void {
    if (!this.reference) return;
    this.reference = null;
    this.refresh();
    this.onChange('Reference cleared.');
  }

  refresh(): void {
    this.keepButton.disabled = this.current() === null;
    this.clearButton.disabled = this.reference === null;
    const r = this.reference;
    this.note.textContent = r
      ? `Reference: “${r.title}”, kept at ${r.keptAt.toLocaleTimeString([], { hour: '2-digit', minute: '2-digit' })} — drawn dashed.`
      : 'No reference kept.';
  }
}
