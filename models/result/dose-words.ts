/**
 * The engine names dose lines by their JSON path ("doses[1]") in its messages and warnings,
 * which is right for a field beside an input but not for a reader of a figure or a report.
 * These words are what the page and the report show instead: "dose line 2 — maintenance"
 * (1-based, with the line's label when it has one). Pure, so the page imports it too.
 */

/** "dose line 2 — maintenance", or "dose line 2" for a line without a label. */
export function doseLineName(index: number, labels: readonly (string | null | undefined)[]): string {
  const label = labels[index];
  return `dose line ${index + 1}${typeof label === 'string' && label.trim() ? ` — ${label.trim()}` : ''}`;
}

/** Every "doses[N]" in an engine message rewritten as the dose line's name. */
export function plainDoseWords(text: string, labels: readonly (string | null | undefined)[]): string {
  return text.replace(/doses\[(\d+)\](?!\.\w|\[)/g, (_, n: string) => doseLineName(Number(n), labels));
}

/** The labels of a scenario's dose lines as typed (null where a line has none or is not an object). */
export function doseLabelsOf(scenario: unknown): (string | null)[] {
  const doses = typeof scenario === 'object' && scenario !== null ? (scenario as { doses?: unknown }).doses : undefined;
  if (!Array.isArray(doses)) return [];
  return doses.map((d) => {
    const label = typeof d === 'object' && d !== null ? (d as { label?: unknown }).label : undefined;
    return typeof label === 'string' && label.trim() ? label.trim() : null;
  });
}
