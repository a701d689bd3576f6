/**
 * Errors as values: every problem with a scenario or a run is a path into the
 * scenario JSON plus a plain sentence, so the page can place it beside its field.
 */
export interface Problem {
  /** JSON path into the scenario, e.g. "doses[2].into"; "" for the scenario as a whole. */
  path: string;
  message: string;
}

export type Outcome<T> = { ok: true; value: T } | { ok: false; problems: Problem[] };

export function formatPath(path: readonly PropertyKey[]): string {
  let out = '';
  for (const key of path) {
    if (typeof key === 'number') out += `[${key}]`;
    else out += out === '' ? String(key) : `.${String(key)}`;
  }
  return out;
}

export function problem(path: string, message: string): Problem {
  return { path, message };
}

/** One line per problem, "path: message", for the command line and logs. */
export function describeProblems(problems: readonly Problem[]): string {
  return problems.map((p) => (p.path ? `${p.path}: ${p.message}` : p.message)).join('\n');
}
