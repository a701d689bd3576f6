/**
 * `tidemark propose FILE`: regimen proposals from the scenario's `propose` block — every amount,
 * interval and infusion duration tried on the model (or, with propose.basis "population", on the
 * same virtual subjects of its population), ranked, as a table (text) or JSON. Run by runCli like
 * simulate (in the worker, under the time limit), since it solves the model; a population's
 * subjects run in that thread, not across the population threads (runCli is synchronous).
 */
import { proposeByBasis } from '../models/regimen/propose-basis.ts';
import type { PopulationProposalLimits } from '../models/regimen/population-proposals.ts';
import type { Proposal, ProposeResult } from '../models/regimen/propose.ts';
import { describeProblems } from '../models/scenario/problems.ts';
import { formatNumber } from '../models/result/format-number.ts';
import { parseOptions, parseWhole } from './cli-options.ts';
import { defaultPopulationLimits } from './population-jobs.ts';
import { readLevelsScenario } from './observations-csv.ts';
import { visibleLines, visibleText } from './terminal-text.ts';
import { fromUserFolder } from './user-folder.ts';

export interface ProposeCliOutcome {
  code: number;
  stdout: string;
  stderr: string;
}

export const proposeUsage = `usage: tidemark propose FILE [options]      (from the repository: npm run -s cli -- propose FILE …)

Regimen proposals: the scenario's \`propose\` block lists the strengths (or amounts), the intervals,
the infusion durations and the targets (written as population.targets); every combination is
solved to steady state on the scenario's model, judged against the targets and ranked.

options:
  --format F       text (default: a ranked table) or json
  --top N          show the N best proposals only (default: all)
  --time-limit S   stop a search that runs longer (seconds; default 600)

With propose.basis "population", every combination is given to the same virtual subjects of the
scenario's \`population\` section and ranked by the share meeting every target (at most
${defaultPopulationLimits.maxSubjects.toLocaleString('en-US')} subjects and ${defaultPopulationLimits.maxRegimenRuns.toLocaleString('en-US')} subjects × regimens, as a population run's grid on the server).

Proposals are model outputs for a clinician's review, not recommendations.`;

/** Population proposals take the server's population limits: subjects, and regimens × subjects. */
export const populationProposalLimits: PopulationProposalLimits = { subjects: defaultPopulationLimits.maxSubjects, runs: defaultPopulationLimits.maxRegimenRuns };

function fail(message: string): ProposeCliOutcome {
  return { code: 2, stdout: '', stderr: `${visibleText(message)}\n\n${proposeUsage}\n` };
}

export function runProposeCli(args: string[], context: { folder: string }): ProposeCliOutcome {
  if (args.includes('--help') || args.includes('-h')) return { code: 0, stdout: proposeUsage + '\n', stderr: '' };
  const parsed = parseOptions(args);
  if (parsed.error) return fail(parsed.error);
  const unknown = [...parsed.options.keys()].find((k) => !['format', 'top', 'time-limit'].includes(k));
  if (unknown !== undefined) return fail(`unknown option --${unknown}`);
  if (parsed.positional.length !== 1) return fail(parsed.positional.length === 0 ? 'a scenario FILE is required' : `unexpected argument '${parsed.positional[1]}'`);
  const format = parsed.options.get('format') ?? 'text';
  if (format !== 'text' && format !== 'json') return fail(`--format must be text or json, not '${format}'`);
  const top = parseWhole('top', parsed.options.get('top'), 1, 100_000);
  if (!top.ok) return fail(top.message);
  const shown = parsed.positional[0];
  const path = fromUserFolder(context.folder, shown);
  const withLevels = readLevelsScenario(path, shown);
  if (!withLevels.ok) return { code: withLevels.code, stdout: '', stderr: visibleLines(withLevels.message) + '\n' };
  const result = proposeByBasis(withLevels.value, populationProposalLimits);
  if (!result.ok) {
    const list = result.problems.map((p) => ({ path: visibleText(p.path), message: visibleText(p.message) }));
    return { code: 1, stdout: '', stderr: `${visibleText(shown)}: ${list.length} problem${list.length > 1 ? 's' : ''}:\n${describeProblems(list)}\n` };
  }
  const r = top.value === undefined ? result.value : { ...result.value, proposals: result.value.proposals.slice(0, top.value) };
  return { code: 0, stdout: format === 'json' ? JSON.stringify(r, null, 2) + '\n' : visibleLines(proposalsText(r, result.value.proposals.length)), stderr: '' };
}

/** Four significant figures in the table: the JSON keeps every digit. */
function short(v: number): string {
  return formatNumber(Number(v.toPrecision(4)));
}

function cell(v: number | null | undefined): string {
  return v === null || v === undefined || Number.isNaN(v) ? '–' : short(v);
}

function loadingCell(p: Proposal, amount: string): string {
  if (!p.loading) return '–';
  return `${short(p.loading.amount)} ${amount}`;
}

/** A share of subjects as "83.4% ± 1.7". */
export function percentWithError(x: { probability: number; standardError: number }): string {
  return `${formatNumber(Number((x.probability * 100).toFixed(1)))}% ± ${formatNumber(Number((x.standardError * 100).toFixed(1)))}`;
}

function spreadCell(x: { p5: number; p50: number; p95: number }): string {
  return Number.isNaN(x.p50) ? '–' : `${short(x.p50)} [${short(x.p5)}–${short(x.p95)}]`;
}

/** The population's ranked table: joint and per-target attainment, trough and peak percentiles. */
function populationText(r: ProposeResult, total: number): string {
  const u = r.units;
  const basis = r.population as NonNullable<ProposeResult['population']>;
  const header = ['rank', 'tier', `amount (${u.amount})`, `interval (${u.time})`, `infusion (${u.time})`, 'all targets', ...r.targets.map((_, k) => `target ${k + 1}`), `trough (${u.concentration})`, `peak (${u.concentration})`];
  const rows = r.proposals.map((p) => {
    const a = p.population as NonNullable<Proposal['population']>;
    return [String(p.rank), String(a.tier), formatNumber(p.amount), formatNumber(p.interval), p.duration > 0 ? formatNumber(p.duration) : '–', percentWithError(a.joint), ...a.targets.map(percentWithError), spreadCell(a.trough), spreadCell(a.peak)];
  });
  const widths = header.map((h, i) => Math.max(h.length, ...rows.map((row) => row[i].length)));
  const line = (cells: string[]) => cells.map((c, i) => (i <= 1 ? c.padStart(widths[i]) : c.padEnd(widths[i]))).join('  ').trimEnd();
  const out = [`${r.title}: regimen proposals for a population of ${basis.subjects} virtual subjects (seed ${basis.seed}) at steady state`, '', line(header), ...rows.map(line)];
  if (r.proposals.length < total) out.push(`(the best ${r.proposals.length} of ${total})`);
  out.push('', 'targets (share of subjects ± Monte Carlo standard error; all targets: met at once):', ...r.targets.map((t, i) => `  ${i + 1}. ${t}`));
  out.push('', `trough and peak: median [5th–95th percentile] in the compartment of the first target; ${basis.percentileRule}`);
  const notes = r.proposals.filter((p) => p.note !== null);
  if (notes.length > 0) out.push('', 'notes:', ...notes.map((p) => `  rank ${p.rank}: ${p.note}`));
  const s = r.searched;
  out.push(
    '',
    `searched: ${s.amounts} amounts × ${s.intervals} intervals × ${s.durations} durations = ${s.regimens} regimens on the same ${basis.subjects} subjects; ${s.steadyStateSolves} steady states (${s.method})`,
    `ranking: ${r.rankingRule}`,
    `time to window: ${basis.timeToWindow}`,
  );
  if (basis.loading) out.push(`loading dose: ${basis.loading}`);
  out.push('', basis.caution, r.caution, '');
  return out.join('\n');
}

/** The ranked table, the targets it answers, the rules and the caution. */
export function proposalsText(r: ProposeResult, total: number): string {
  if (r.population) return populationText(r, total);
  const u = r.units;
  const header = ['rank', `amount (${u.amount})`, `interval (${u.time})`, `infusion (${u.time})`, 'loading', `trough (${u.concentration})`, `peak (${u.concentration})`, `AUC24 (${u.auc})`, 'targets', `to window (${u.time})`, `with loading (${u.time})`];
  const rows = r.proposals.map((p) => [
    String(p.rank),
    formatNumber(p.amount),
    formatNumber(p.interval),
    p.duration > 0 ? formatNumber(p.duration) : '–',
    loadingCell(p, u.amount),
    cell(p.steadyState?.trough),
    cell(p.steadyState?.peak),
    cell(p.steadyState?.auc24),
    p.targetsMet.map((m) => (m ? '✓' : '✗')).join(' '),
    cell(p.timeToWindow),
    p.loading ? cell(p.loading.timeToWindow) : '–',
  ]);
  const widths = header.map((h, i) => Math.max(h.length, ...rows.map((row) => row[i].length)));
  const line = (cells: string[]) => cells.map((c, i) => (i === 0 ? c.padStart(widths[i]) : c.padEnd(widths[i]))).join('  ').trimEnd();
  const out = [`${r.title}: regimen proposals at steady state`, '', line(header), ...rows.map(line)];
  if (r.proposals.length < total) out.push(`(the best ${r.proposals.length} of ${total})`);
  out.push('', 'targets (✓/✗ in this order):', ...r.targets.map((t, i) => `  ${i + 1}. ${t}`));
  const notes = r.proposals.filter((p) => p.note !== null);
  if (notes.length > 0) out.push('', 'notes:', ...notes.map((p) => `  rank ${p.rank}: ${p.note}`));
  const s = r.searched;
  out.push(
    '',
    `searched: ${s.amounts} amounts × ${s.intervals} intervals × ${s.durations} durations = ${s.regimens} regimens; ${s.steadyStateSolves} steady-state solves (${s.method}), ${s.intervalsSimulated} intervals simulated from empty`,
    `ranking: ${r.rankingRule}`,
    `time to window: ${r.timeToWindowDefinition}`,
    '',
    r.caution,
    '',
  );
  return out.join('\n');
}
