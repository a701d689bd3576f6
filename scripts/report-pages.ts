/**
 * `npm run report:pages [-- SCENARIO.json [--reference OTHER.json]]`: renders every page of
 * the report of a scenario (default samples/brennock-oral-bid.json) to PNG for a look by eye,
 * with pdftoppm (poppler-utils) at 80 dpi into tests/artifacts/report/, and page 1 at 60 dpi
 * into docs/report-page-1.png for the README. Not a test: it only writes files.
 */
import { spawnSync } from 'node:child_process';
import { mkdirSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { basename, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { buildReport } from '../server/report/report.ts';

const root = fileURLToPath(new URL('..', import.meta.url));
const args = process.argv.slice(2);
const refAt = args.indexOf('--reference');
const referenceFile = refAt >= 0 ? args[refAt + 1] : undefined;
const positional = refAt >= 0 ? args.filter((_, i) => i !== refAt && i !== refAt + 1) : args;
const scenarioFile = positional[0] ?? join(root, 'samples/brennock-oral-bid.json');
const writeDocsPage = positional[0] === undefined;

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

const outcome = buildReport({ scenario: readJson(scenarioFile), reference: referenceFile ? readJson(referenceFile) : undefined });
if (!outcome.ok) {
  console.error(`${scenarioFile}: no report (${outcome.status}):`);
  for (const p of outcome.problems) console.error(`  ${p.path || '(scenario)'}: ${p.message}`);
  process.exit(1);
}

const outDir = join(root, 'tests/artifacts/report');
mkdirSync(outDir, { recursive: true });
const name = basename(scenarioFile).replace(/\.json$/, '');
for (const f of readdirSync(outDir)) if (f.startsWith(`${name}-page`)) rmSync(join(outDir, f));
const pdf = join(outDir, `${name}.pdf`);
writeFileSync(pdf, outcome.bytes);
run('pdftoppm', ['-png', '-r', '80', pdf, join(outDir, `${name}-page`)]);
console.log(`${outcome.pages} pages of ${outcome.fileName} → ${outDir}/${name}-page-*.png`);
if (writeDocsPage) {
  mkdirSync(join(root, 'docs'), { recursive: true });
  run('pdftoppm', ['-png', '-r', '60', '-f', '1', '-l', '1', '-singlefile', pdf, join(root, 'docs/report-page-1')]);
  console.log('page 1 → docs/report-page-1.png');
}
