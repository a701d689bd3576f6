/** The population tests' scenario: samples/halvorin-population-infusion.json (invented compound), copied and edited. */
import { readFileSync } from 'node:fs';

export const halvorinDemo = JSON.parse(readFileSync(new URL('../../samples/halvorin-population-infusion.json', import.meta.url), 'utf8'));

/** A copy of the demo without its regimen grid, changed by `edit`. */
export function edited(edit: (s: typeof halvorinDemo) => void): typeof halvorinDemo {
  const s = JSON.parse(JSON.stringify(halvorinDemo));
  delete s.population.regimens;
  edit(s);
  return s;
}
