/**
 * The rule for a covariate's name where it becomes a key of the scenario (a covariate table's
 * columns): a letter, then letters, digits or "_", at most 40 characters. The name is a segment
 * of JSON paths (population.covariateTable.rows[2].weight), so "." or "[" in it would read as a
 * nested field; the message names the character that breaks the rule.
 */
export const covariateNamePattern = /^[A-Za-z][A-Za-z0-9_]{0,39}$/;

const rule = 'a covariate name is a letter, then letters, digits or "_" (at most 40 characters)';

/** How a character is shown in a message: quoted, with a word for the ones that cannot be seen. */
function shown(ch: string): string {
  if (ch === ' ') return "' ' (a space)";
  if (/\s/.test(ch) || /\p{Cc}/u.test(ch)) return `U+${(ch.codePointAt(0) ?? 0).toString(16).toUpperCase().padStart(4, '0')}`;
  return `'${ch}'`;
}

/** Why `name` cannot be a covariate name, or null when it can. */
export function covariateNameProblem(name: string): string | null {
  if (covariateNamePattern.test(name)) return null;
  if (name === '') return `the name is empty: ${rule}`;
  // A path separator is named first: it is the one that would silently nest the field.
  const separator = [...name].find((ch) => ch === '.' || ch === '[' || ch === ']');
  if (separator !== undefined) return `'${name}' holds ${shown(separator)}, which would split its JSON path: ${rule}`;
  const first = [...name][0];
  if (!/[A-Za-z]/.test(first)) return `'${name}' starts with ${shown(first)}: ${rule}`;
  const bad = [...name].find((ch) => !/[A-Za-z0-9_]/.test(ch));
  if (bad !== undefined) return `'${name}' holds ${shown(bad)}: ${rule}`;
  return `'${name}' is ${name.length} characters long: ${rule}`;
}
