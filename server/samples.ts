/** The bundled demo scenarios, read once from samples/. */
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';

export interface Sample {
  id: string;
  title: string;
  description: string;
  scenario: unknown;
}

export const samplesDir = new URL('../samples/', import.meta.url);

export function loadSamples(dir: string = samplesDir.pathname): Sample[] {
  return readdirSync(dir)
    .filter((f) => f.endsWith('.json'))
    .sort()
    .map((f) => {
      const scenario = JSON.parse(readFileSync(join(dir, f), 'utf8')) as { title?: string; description?: string };
      return { id: f.replace(/\.json$/, ''), title: scenario.title ?? f, description: scenario.description ?? '', scenario };
    });
}
