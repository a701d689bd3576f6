/** What every form may ask of the page: re-render, announce, forget field errors. */
export interface FormHooks {
  /** Re-render every form, keeping keyboard focus where it was. */
  rerender(focusAfter?: string): void;
  /** Say something in the polite status region. */
  announce(message: string): void;
  /** Forget field errors (their paths shift when rows are added or removed). */
  clearErrors(): void;
}
