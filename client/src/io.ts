/**
 * Files: save the scenario as JSON, open one back, export the curves as CSV. The saved
 * file is the scenario object itself, so nothing the form does not show is lost.
 */
import { clockTimeIso, type SimulationResultJson } from '../../models/result/result-format.ts';
import { download, slug } from './dom.ts';
import { formProblem, type ScenarioDoc } from './store.ts';

export function saveScenario(doc: ScenarioDoc): void {
  download(`${slug(doc.title, 'scenario')}.json`, `${JSON.stringify(doc, null, 2)}\n`, 'application/json');
}

export type Opened = { ok: true; doc: ScenarioDoc; name: string } | { ok: false; message: string };

export async function openScenario(file: File): Promise<Opened> {
  let text: string;
  try {
    text = await file.text();
  } catch {
    return { ok: false, message: `The file “${file.name}” could not be read.` };
  }
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch {
    return { ok: false, message: `The file “${file.name}” is not valid JSON, so it cannot be opened as a scenario.` };
  }
  const problem = formProblem(value);
  if (problem) return { ok: false, message: `The file “${file.name}” cannot be opened as a scenario: ${problem}.` };
  return { ok: true, doc: value as ScenarioDoc, name: file.name };
}

function csvField(text: string): string {
  return /[",\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

function num(v: number | null | undefined): string {
  return v === null || v === undefined || !Number.isFinite(v) ? '' : String(v);
}

/** One row per reported time: time, then each compartment's amount and (when it has a volume) concentration. */
export function curvesCsv(result: SimulationResultJson): string {
  const u = result.units;
  const entries = Object.entries(result.compartments);
  const clock = result.clock;
  const header = [`time (${u.time})`];
  // The clock time beside each elapsed time when the scenario has a clock, as the command line's CSV.
  if (clock) header.push('clock time');
  for (const [id, s] of entries) {
    header.push(`${id} amount (${u.amount})`);
    if (s.concentration) header.push(`${id} concentration (${u.concentration})`);
  }
  const lines = [header.map(csvField).join(',')];
  for (let r = 0; r < result.times.length; r++) {
    const row = [num(result.times[r])];
    if (clock) row.push(clockTimeIso(result.times[r], clock));
    for (const [, s] of entries) {
      row.push(num(s.amount[r]));
      if (s.concentration) row.push(num(s.concentration[r]));
    }
    lines.push(row.join(','));
  }
  return `${lines.join('\n')}\n`;
}

export function exportCurves(result: SimulationResultJson): void {
  download(`${slug(result.title, 'curves')}-curves.csv`, curvesCsv(result), 'text/csv');
}
