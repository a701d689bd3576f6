/**
 * A population result as CSV (one row per output time: the percentile bands) and as a readable
 * summary (settings, exposure percentiles, attainment ± standard error, the regimen grid,
 * warnings and the caution, which is always printed).
 */
import type { FigureSummary, PopulationResult } from '../models/population/summary.ts';
import { formatNumber } from '../models/result/format-number.ts';

function csvField(text: string): string {
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

/** Bands as CSV: time, then per compartment and percentile, then the observation bands when present. */
export function populationToCsv(r: PopulationResult): string {
  const u = r.units.concentration;
  const header = [`time (${r.units.time})`];
  const columns: number[][] = [];
  const add = (bands: Record<string, Record<string, number[]>>, word: string) => {
    for (const [id, byPercentile] of Object.entries(bands)) {
      for (const p of r.percentiles) {
        header.push(`${id}${word} p${p} (${u})`);
        columns.push(byPercentile[p]);
      }
    }
  };
  add(r.bands, '');
  if (r.observationBands) add(r.observationBands, ' observed');
  const lines = [header.map(csvField).join(',')];
  for (let j = 0; j < r.times.length; j++) lines.push([r.times[j], ...columns.map((c) => c[j])].map(String).join(','));
  return lines.join('\n') + '\n';
}

const percent = (p: number) => `${(p * 100).toFixed(1)}%`;
const plusMinus = (p: number, se: number) => `${percent(p)} ± ${(se * 100).toFixed(1)}%`;

/** A table with columns padded to their widest cell; the first column left-aligned, the rest right. */
function table(rows: string[][]): string[] {
  const widths = rows[0].map((_, k) => Math.max(...rows.map((r) => (r[k] ?? '').length)));
  return rows.map((r) => '  ' + r.map((c, k) => (k === 0 ? c.padEnd(widths[k]) : c.padStart(widths[k]))).join('   ').trimEnd());
}

const figureWords: Record<string, [label: string, unit: 'concentration' | 'time' | 'auc']> = {
  cmax: ['Cmax', 'concentration'],
  tmax: ['Tmax (from the interval start)', 'time'],
  cmin: ['Cmin', 'concentration'],
  trough: ['trough', 'concentration'],
  auc: ['AUC over the interval', 'auc'],
  cavg: ['average concentration', 'concentration'],
  auc24: ['AUC per 24 h', 'auc'],
};

const n = (v: number) => (Number.isFinite(v) ? formatNumber(v) : '—');

function exposureTable(r: PopulationResult, id: string): string[] {
  const figures = r.exposure[id];
  const rows: string[][] = [['figure', ...r.percentiles.map((p) => `p${p}`), 'mean', 'unit', 'subjects']];
  for (const [name, [label, unit]] of Object.entries(figureWords)) {
    const f = figures[name] as FigureSummary | undefined;
    if (!f) continue;
    rows.push([label, ...r.percentiles.map((p) => n(f.percentiles[p])), n(f.mean), r.units[unit], String(f.subjects)]);
  }
  const windows = figures.windows;
  if (Array.isArray(windows)) {
    for (const w of windows) rows.push([`share of the interval ${w.label}`, ...r.percentiles.map((p) => percent(w.share.percentiles[p])), percent(w.share.mean), '', String(w.share.subjects)]);
  }
  return table(rows);
}

/** The readable summary; `clean` escapes user text (titles, labels, warnings) for the terminal. */
export function populationToText(r: PopulationResult, clean: (text: string) => string = (t) => t): string {
  const out: string[] = [];
  out.push(clean(r.title), '');
  out.push(`Virtual population: ${r.subjects} subjects, seed ${r.seed}; percentiles ${r.percentiles.map((p) => `p${p}`).join(', ')}`);
  out.push('Covariates drawn:');
  out.push(...(r.settings.covariates.length > 0 ? r.settings.covariates.map((c) => `  ${clean(c)}`) : ['  none: every subject has the scenario subject\'s covariates']));
  out.push('Quantities that vary between subjects:');
  out.push(...(r.settings.varying.length > 0 ? r.settings.varying.map((v) => `  ${clean(v.quantity)} (${clean(v.path)}): cv ${n(v.cv * 100)}%, ${v.variation}`) : ['  none']));
  if (r.settings.correlations.length > 0) out.push(`Correlations: ${r.settings.correlations.map((c) => `${clean(c.between[0])}–${clean(c.between[1])} ${formatNumber(c.value)}`).join('; ')}`);
  const res = r.settings.residual;
  out.push(res ? `Residual error of observations: additive ${formatNumber(res.additive)} ${r.units.concentration}, proportional ${formatNumber(res.proportional * 100)}%` : 'Residual error: none');
  out.push('');
  for (const id of Object.keys(r.exposure)) {
    out.push(`Exposure in ${clean(id)}, ${r.headlinePeriod}:`, ...exposureTable(r, id), '');
  }
  if (r.attainment.length > 0) {
    out.push('Target attainment (probability ± Monte Carlo standard error):');
    const rows = [['target', 'when', 'compartment', 'attained', 'subjects', 'undetermined']];
    for (const a of r.attainment) rows.push([clean(a.target), a.period, clean(a.compartment), plusMinus(a.probability, a.standardError), `${a.attained} of ${a.subjects}`, String(a.undetermined)]);
    out.push(...table(rows), '');
  }
  if (r.regimens) {
    const g = r.regimens;
    out.push('Regimens compared on the same subjects (attainment per target; * marks the best):');
    const rows = [['', 'regimen', ...r.attainment.map((a, k) => `target ${k + 1}`), 'every level target', 'every ceiling']];
    g.rows.forEach((row, k) =>
      rows.push([k === g.best ? '*' : '', clean(row.regimen), ...row.attainment.map((a) => plusMinus(a.probability, a.standardError)), row.joint ? plusMinus(row.joint.probability, row.joint.standardError) : '—', percent(row.ceiling.probability)]),
    );
    out.push(...table(rows).map((line) => line.replace(/^ {2}/, '')));
    out.push(`  targets: ${r.attainment.map((a, k) => `${k + 1} = ${clean(a.target)}`).join('; ')}`);
    out.push(g.best === null ? '  no regimen keeps the ceiling targets often enough to be named best' : `  best: ${clean(g.rows[g.best].regimen)}`);
    out.push(`  rule: ${g.rule}`, '');
  }
  const d = r.diagnostics;
  out.push(`Methods: ${d.methods.join(', ') || '—'}; worst mass balance ${d.worstMassBalance.toExponential(1)}; subjects without steady state: ${d.subjectsWithoutSteadyState}`);
  for (const w of d.warnings) out.push(`warning: ${clean(w)}`);
  out.push('', r.caution);
  return out.join('\n') + '\n';
}
