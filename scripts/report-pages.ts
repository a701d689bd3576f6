/**
 * `npm run report:pages [-- SCENARIO.json [--reference OTHER.json] [--subjects N] [--dpi D]]`:
 * renders every page of the report of a scenario to PNG for a look by eye, with pdftoppm
 * (poppler-utils) at 80 dpi (or D) into tests/artifacts/report/. Without a scenario it renders
 * samples/brennock-oral-bid.json, writes its page 1 at 60 dpi to docs/report-page-1.png for
 * the README, and then renders the virtual-population demo
 * (samples/halvorin-population-infusion.json) too. `--subjects N` replaces a population's
 * number of subjects, for a quicker look. Not a test: it only writes files.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { basename, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { buildReport } from '../server/report/report.ts';

const root = fileURLToPath(new URL('..', import.meta.url));
const args = process.argv.slice(2);
const flags = new Map<string, string>();
const positional: string[] = [];
for (let i = 0; i < args.length; i++) {
  if (args[i].startsWith('--')) flags.set(args[i], args[++i] ?? '');
  else positional.push(args[i]);
}
const referenceFile = flags.get('--reference');
const subjects = flags.has('--subjects') ? Number(flags.get('--subjects')) : undefined;
const dpi = flags.has('--dpi') ? Number(flags.get('--dpi')) : 80;
if (subjects !== undefined && !(Number.isInteger(subjects) && subjects >= 1)) {
  console.error(`--subjects must be a whole number of at least 1, got '${flags.get('--subjects')}'`);
  process.exit(1);
}
if (!(dpi >= 20 && dpi <= 300)) {
  console.error(`--dpi must be from 20 to 300, got '${flags.get('--dpi')}'`);
  process.exit(1);
}
const writeDocsPage = positional[0] === undefined;
const populationDemo = join(root, 'samples/halvorin-population-infusion.json');
const scenarioFiles = positional.length > 0 ? positional : [join(root, 'samples/brennock-oral-bid.json'), ...(existsSync(populationDemo) ? [populationDemo] : [])];

function readJson(path: string): unknown {
  return JSON.parse(readFileSync(path, 'utf8'));
}

function run(command: string, commandArgs: string[]): void {
  const done = spawnSync(command, commandArgs, { stdio: 'inherit' });
  if (done.error || done.status !== 0) {
    console.error(`${command} failed${done.error ? `: ${done.error.message}` : ` (exit ${done.status})`}; is poppler-utils installed?`);
    process.exit(1);
  }
}

/** The scenario with its population's subjects replaced, when --subjects is given. */
function withSubjects(scenario: unknown): unknown {
  if (subjects === undefined || typeof scenario !== 'object' || scenario === null) return scenario;
  const population = (scenario as { population?: unknown }).population;
  if (typeof population !== 'object' || population === null) return scenario;
  return { ...scenario, population: { ...population, subjects } };
}

const outDir = join(root, 'tests/artifacts/report');
mkdirSync(outDir, { recursive: true });
scenarioFiles.forEach((scenarioFile, k) => {
  const outcome = buildReport({ scenario: withSubjects(readJson(scenarioFile)), reference: referenceFile ? readJson(referenceFile) : undefined });
  if (!outcome.ok) {
    console.error(`${scenarioFile}: no report (${outcome.status}):`);
    for (const p of outcome.problems) console.error(`  ${p.path || '(scenario)'}: ${p.message}`);
    process.exit(1);
  }
  const name = basename(scenarioFile).replace(/\.json$/, '');
  for (const f of readdirSync(outDir)) if (f.startsWith(`${name}-page`)) rmSync(join(outDir, f));
  const pdf = join(outDir, `${name}.pdf`);
  writeFileSync(pdf, outcome.bytes);
  run('pdftoppm', ['-png', '-r', String(dpi), pdf, join(outDir, `${name}-page`)]);
  console.log(`${outcome.pages} pages of ${outcome.fileName} → ${outDir}/${name}-page-*.png`);
  if (writeDocsPage && k === 0) {
    mkdirSync(join(root, 'docs'), { recursive: true });
    run('pdftoppm', ['-png', '-r', '60', '-f', '1', '-l', '1', '-singlefile', pdf, join(root, 'docs/report-page-1')]);
    console.log('page 1 → docs/report-page-1.png');
  }
});
