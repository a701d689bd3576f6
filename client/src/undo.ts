/**
 * Undo for removals: a form that removes rows (a compartment with its transfers, a transfer,
 * a dose line, a target window) says what went in a bar above the form with an Undo button.
 * Undo puts the same row objects back at their places. It is offered for the last removal
 * only, until the scenario changes in any other way (then the places may no longer hold).
 */
import { h } from './dom.ts';
import { button } from './fields.ts';
import type { FormHooks } from './form-hooks.ts';
import type { ScenarioDoc, ScenarioStore } from './store.ts';

export interface Removal {
  /** What was removed, in words ("Removed dose line 2 (maintenance).") */
  message: string;
  /** Puts the removed rows back into the scenario. */
  restore(doc: ScenarioDoc): void;
  /** Where the focus goes after Undo (a focus key or a path). */
  focusAfter: string;
}

export class UndoOffer {
  private last: Removal | null = null;
  private undoing = false;

  constructor(
    private readonly store: ScenarioStore,
    private readonly root: HTMLElement,
    private readonly hooks: FormHooks,
    private readonly name: string,
  ) {
    store.subscribe(() => {
      if (this.undoing || !this.last) return;
      this.last = null;
      this.root.querySelector(':scope > .undo-bar')?.remove();
    });
  }

  /** Call after the store changed for the removal, before the form re-renders. */
  offer(removal: Removal): void {
    this.last = removal;
  }

  /** The bar for the form's top, or null when nothing can be undone. */
  bar(): HTMLElement | null {
    const removal = this.last;
    if (!removal) return null;
    const undo = button('Undo', { 'data-testid': `undo-${this.name}`, 'data-focus-key': `undo-${this.name}`, class: 'quiet' }, () => {
      this.undoing = true;
      try {
        this.store.mutate((doc) => removal.restore(doc));
      } finally {
        this.undoing = false;
      }
      this.last = null;
      this.hooks.clearErrors();
      this.hooks.rerender(removal.focusAfter);
      this.hooks.announce('Undone: put back what was removed.');
    });
    return h('div', { class: 'undo-bar', role: 'status', 'data-testid': `undo-bar-${this.name}` }, h('span', {}, removal.message), undo);
  }
}
