/**
 * "Download report": sends the scenario of the run on screen (and the kept compare reference,
 * when there is one) to /api/report and saves the PDF the server answers. When the form has
 * changed since that run, the page runs it first (see main.ts), so the report and the screen
 * always show the same run. Problems come back as for a run: beside their fields (400) or in
 * the summary (422, busy, unreachable). When the library is available the report is issued for
 * a stored version (the page saves first if needed) and recorded there with who asked for it.
 */
import type { Problem } from './api.ts';
import { failureOf, refusedBeforeSending, unreachable } from './api.ts';
import { h } from './dom.ts';

export type ReportOutcome =
  | { kind: 'ok'; blob: Blob; filename: string }
  | { kind: 'invalid'; problems: Problem[] }
  | { kind: 'failed'; problems: Problem[] }
  | { kind: 'message'; text: string };

/** The file name from `Content-Disposition: attachment; filename="…"`, or a fallback. */
export function filenameFrom(header: string | null, fallback: string): string {
  const match = header ? /filename="([^"]+)"/.exec(header) : null;
  return match ? match[1] : fallback;
}


/** `query` (scenario, version, by) makes the library record the issued report. */
export async function requestReport(scenario: unknown, reference: unknown | null, query = ''): Promise<ReportOutcome> {
  // Empty covariate cells are refused beside them before anything is sent, as for a run.
  const refused = refusedBeforeSending(scenario);
  if (refused) return refused;
  let res: Response;
  try {
    res = await fetch(query ? `api/report?${query}` : 'api/report', {
      method: 'POST',
      headers: { 'content-type': 'application/json', accept: 'application/pdf, application/json' },
      body: JSON.stringify(reference === null ? scenario : { scenario, reference }),
    });
  } catch {
    return { kind: 'message', text: unreachable };
  }
  if (res.status === 200 && (res.headers.get('content-type') ?? '').includes('application/pdf')) {
    const blob = await res.blob();
    return { kind: 'ok', blob, filename: filenameFrom(res.headers.get('content-disposition'), 'tidemark-report.pdf') };
  }
  let body: unknown = null;
  try {
    body = await res.json();
  } catch {
    body = null;
  }
  return failureOf(res.status, body, 'report');
}

function save(blob: Blob, filename: string): void {
  const url = URL.createObjectURL(blob);
  const a = h('a', { href: url, download: filename, class: 'visually-hidden' });
  document.body.append(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 1000);
}

export interface ReportHooks {
  /**
   * The scenario of the run on screen, after running the form first when it changed since
   * (`rerun`); null when that run did not succeed (its problems are already shown).
   */
  scenario: () => Promise<{ scenario: unknown; rerun: boolean } | null>;
  /** The kept reference's scenario, or null. */
  reference: () => unknown | null;
  announce: (message: string) => void;
  showInvalid: (problems: Problem[]) => void;
  showFailure: (problems: Problem[]) => void;
  showMessage: (text: string, title: string) => void;
  /**
   * The stored version to issue the report for (saving first when the screen has unsaved
   * changes); null to make it without recording (no library); 'stop' when the user cancelled.
   */
  issueFor: (scenario: unknown) => Promise<IssueTarget | null | 'stop'>;
}

export interface IssueTarget {
  name: string;
  version: number;
  fingerprint: string;
  /** scenario=ID&version=V&by=AUTHOR */
  query: string;
}

/** Adds the button after `anchor` (the CSV export) and wires it. */
export function addReportButton(anchor: HTMLElement, hooks: ReportHooks): HTMLButtonElement {
  const button = h(
    'button',
    { type: 'button', id: 'download-report', 'data-testid': 'download-report', title: 'A printable PDF of the run on screen (the form is run first if it changed): model, regimen, plots, figures and the check of the numbers' },
    'Download report',
  );
  anchor.after(button);
  button.addEventListener('click', async () => {
    if (button.getAttribute('aria-busy') === 'true') return;
    button.setAttribute('aria-busy', 'true');
    button.disabled = true;
    try {
      const shown = await hooks.scenario();
      if (shown === null) {
        hooks.announce('No report: the changed form did not run; the problems are listed with the run.');
        return;
      }
      const target = await hooks.issueFor(shown.scenario);
      if (target === 'stop') {
        hooks.announce('No report: the scenario was not saved.');
        return;
      }
      const reference = hooks.reference();
      hooks.announce(reference === null ? 'Making the report…' : 'Making the report, with the kept reference drawn dashed…');
      const outcome = await requestReport(structuredClone(shown.scenario), reference, target?.query ?? '');
      switch (outcome.kind) {
        case 'ok': {
          save(outcome.blob, outcome.filename);
          const issued = target ? `Report issued for “${target.name}” version ${target.version} (fingerprint ${target.fingerprint}), saved as ${outcome.filename}.` : null;
          hooks.announce(
            shown.rerun
              ? `The form had changed since the last run, so it was run first. ${issued ?? `Downloaded the report of that run (now on screen) as ${outcome.filename}.`}`
              : (issued ?? `Downloaded the report of the run on screen as ${outcome.filename}.`),
          );
          break;
        }
        case 'invalid':
          hooks.showInvalid(outcome.problems);
          hooks.announce('No report: the scenario has problems, listed with the fields.');
          break;
        case 'failed':
          hooks.showFailure(outcome.problems);
          hooks.announce('No report: the simulation could not be completed.');
          break;
        case 'message':
          hooks.showMessage(outcome.text, 'No report');
          break;
      }
    } finally {
      button.removeAttribute('aria-busy');
      button.disabled = false;
    }
  });
  return button;
}
