/**
 * `tidemark propose FILE`: regimen proposals from the scenario's `propose` block — every amount,
 * interval and infusion duration tried on the model (or, with propose.basis "population", on the
 * same virtual subjects of its population), ranked, as a table (text) or JSON. Run by runCli like
 * simulate, since it solves the model; a large population's subjects run across threads
 * (proposals-threads.ts, which blocks this thread while they work, runCli being synchronous).
 */
import { availableParallelism } from 'node:os';
import type { PopulationProposalLimits } from '../models/regimen/population-proposals.ts';
import type { Proposal, ProposeResult } from '../models/regimen/propose.ts';
import { simulatedLoading } from '../models/regimen/proposal-words.ts';
import { describeProblems } from '../models/scenario/problems.ts';
import { formatNumber } from '../models/result/format-number.ts';
import { parseOptions, parseWhole } from './cli-options.ts';
import { defaultPopulationLimits } from './population-jobs.ts';
import { readLevelsScenario } from './observations-csv.ts';
import { proposeOnThreads, THREADS_FROM_RUNS } from './proposals-threads.ts';
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
  --threads N      threads for a population's subjects (default: the machine's cores; one
                   below ${THREADS_FROM_RUNS.toLocaleString('en-US')} subjects × regimens)
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
  const unknown = [...parsed.options.keys()].find((k) => !['format', 'top', 'time-limit', 'threads'].includes(k));
  if (unknown !== undefined) return fail(`unknown option --${unknown}`);
  if (parsed.positional.length !== 1) return fail(parsed.positional.length === 0 ? 'a scenario FILE is required' : `unexpected argument '${parsed.positional[1]}'`);
  const format = parsed.options.get('format') ?? 'text';
  if (format !== 'text' && format !== 'json') return fail(`--format must be text or json, not '${format}'`);
  const top = parseWhole('top', parsed.options.get('top'), 1, 100_000);
  if (!top.ok) return fail(top.message);
  const threads = parseWhole('threads', parsed.options.get('threads'), 1, 256);
  if (!threads.ok) return fail(threads.message);
  const shown = parsed.positional[0];
  const path = fromUserFolder(context.folder, shown);
  const withLevels = readLevelsScenario(path, shown);
  if (!withLevels.ok) return { code: withLevels.code, stdout: '', stderr: visibleLines(withLevels.message) + '\n' };
  const result = proposeOnThreads(withLevels.value, populationProposalLimits, {
    threads: threads.value ?? availableParallelism(),
    // Given --threads: start the workers at once; else only when the work left is worth a second thread.
    workersAtOnce: threads.value !== undefined,
  });
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

/** The loading amount, and when the strengths fell short of the computed one, the row's note saying so. */
function loadingCell(p: Proposal, amount: string): string {
  if (!p.loading) return '–';
  const lowered = p.loading.loweredFrom !== null ? ` (lowered from ${short(p.loading.loweredFrom)})` : '';
  return `${short(p.loading.amount)} ${amount}${lowered}${p.loading.note ? ` (${p.loading.note})` : ''}`;
}

/** A share of subjects as "83.4% ± 1.7". */
export function percentWithError(x: { probability: number; standardError: number }): string {
  return `${formatNumber(Number((x.probability * 100).toFixed(1)))}% ± ${formatNumber(Number((x.standardError * 100).toFixed(1)))}`;
}

function spreadCell(x: { p5: number; p50: number; p95: number }): string {
  return Number.isNaN(x.p50) ? '–' : `${short(x.p50)} [${short(x.p5)}–${short(x.p95)}]`;
}

/** A time percentile, or "n.r." when it falls among the subjects who never reach the window. */
function timeCell(v: number | null): string {
  return v === null ? 'n.r.' : short(v);
}

/** Median [5th–95th] time to the window over every subject. */
export function timeSpreadText(t: { p5: number | null; p50: number | null; p95: number | null }): string {
  return `${timeCell(t.p50)} [${timeCell(t.p5)}–${timeCell(t.p95)}]`;
}

/** A share as a whole percentage, for the short per-interval list. */
function percent(x: { probability: number }): string {
  return `${formatNumber(Math.round(x.probability * 100))}%`;
}

/** Why subjects never reach the window, in words ("25 steady state misses a target, 1 …"), or "none". */
export function neverWords(n: { steadyStateMisses: number; noSteadyState: number; onlyAtSteadyState: number; failed: number }): string {
  const parts = [
    n.steadyStateMisses > 0 ? `${n.steadyStateMisses} whose steady state misses a target` : null,
    n.noSteadyState > 0 ? `${n.noSteadyState} without a steady state` : null,
    n.onlyAtSteadyState > 0 ? `${n.onlyAtSteadyState} meeting them only at the steady state` : null,
    n.failed > 0 ? `${n.failed} whose run failed` : null,
  ].filter((x): x is string => x !== null);
  return parts.length > 0 ? parts.join(', ') : 'none';
}

/** The population's ranked table: joint and per-target attainment, trough and peak percentiles, the approach from empty. */
function populationText(r: ProposeResult, total: number): string {
  const u = r.units;
  const basis = r.population as NonNullable<ProposeResult['population']>;
  const loaded = basis.loading !== null;
  const header = [
    'rank',
    'tier',
    `amount (${u.amount})`,
    `interval (${u.time})`,
    `infusion (${u.time})`,
    'all targets',
    ...r.targets.map((_, k) => `target ${k + 1}`),
    `trough (${u.concentration})`,
    `peak (${u.concentration})`,
    `to window (${u.time})`,
    'interval 1',
    ...(loaded ? ['loading', 'interval 1 loaded'] : []),
  ];
  const rows = r.proposals.map((p) => {
    const a = p.population as NonNullable<Proposal['population']>;
    const first = a.approach.firstInterval;
    return [
      String(p.rank),
      String(a.tier),
      formatNumber(p.amount),
      formatNumber(p.interval),
      p.duration > 0 ? formatNumber(p.duration) : '–',
      percentWithError(a.joint),
      ...a.targets.map(percentWithError),
      spreadCell(a.trough),
      spreadCell(a.peak),
      timeSpreadText(a.approach.timeToWindow),
      percentWithError(first.without),
      ...(loaded ? [loadingCell(p, u.amount), first.withLoading ? percentWithError(first.withLoading) : '–'] : []),
    ];
  });
  const widths = header.map((h, i) => Math.max(h.length, ...rows.map((row) => row[i].length)));
  const line = (cells: string[]) => cells.map((c, i) => (i <= 1 ? c.padStart(widths[i]) : c.padEnd(widths[i]))).join('  ').trimEnd();
  const out = [`${r.title}: regimen proposals for a population of ${basis.subjects} virtual subjects (seed ${basis.seed}) at steady state and from the first dose`, '', line(header), ...rows.map(line)];
  if (r.proposals.length < total) out.push(`(the best ${r.proposals.length} of ${total})`);
  out.push('', 'targets (share of subjects ± Monte Carlo standard error; all targets: met at once):', ...r.targets.map((t, i) => `  ${i + 1}. ${t}`));
  out.push('', `trough and peak: median [5th–95th percentile] at steady state in the compartment of the first target; ${basis.percentileRule}`);
  out.push(
    `to window: median [5th–95th percentile] over every subject, those who never reach it sorted last ("n.r.": the percentile falls among them); interval 1: the share meeting every target in the first dosing interval from empty${loaded ? ', without and with the loading dose' : ''}`,
  );
  const shown = r.proposals[0]?.population?.approach.byInterval.length ?? 0;
  out.push('', `from the first dose: the share meeting every target in dosing intervals 1–${shown}; subjects reaching the window, and why the others never do:`);
  for (const p of r.proposals) {
    const a = (p.population as NonNullable<Proposal['population']>).approach;
    out.push(`  rank ${p.rank}: ${a.byInterval.map(percent).join(' · ')}; reached by ${a.reached} of ${basis.subjects}; never: ${neverWords(a.neverReached)}`);
  }
  const notes = r.proposals.filter((p) => p.note !== null);
  if (notes.length > 0) out.push('', 'notes:', ...notes.map((p) => `  rank ${p.rank}: ${p.note}`));
  const s = r.searched;
  out.push(
    '',
    `searched: ${s.amounts} amounts × ${s.intervals} intervals × ${s.durations} durations = ${s.regimens} regimens on the same ${basis.subjects} subjects; ${s.steadyStateSolves} steady states (${s.method}), ${s.intervalsSimulated} intervals simulated from empty`,
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
    simulatedLoading(p) ? cell(simulatedLoading(p)?.timeToWindow) : '–',
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
