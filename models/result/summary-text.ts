/**
 * A plain-text summary of a result for the terminal: the figures a reviewer reads first,
 * the method and its diagnostics, measured levels beside the model, and the caution that
 * this is a simulation. With a clock, elapsed times also show as clock times (clockLabel).
 */
import type { SimulationResult } from '../simulate.ts';
import type { CompartmentFigures } from '../figures/exposure.ts';
import type { ObservationFit } from '../levels/observation.ts';
import { clockLabel } from '../levels/clock.ts';

type ResultClock = NonNullable<SimulationResult['clock']>;

/** The terminal width the tables are laid out for. */
const lineWidth = 80;

export const caution =
  'Model simulation for review only — not dosing advice. It is only as good as the parameters entered; dosing decisions belong to qualified clinicians under local protocols, product labelling and applicable regulations.';

/** Four significant digits, without exponent for ordinary magnitudes. */
export function fmt(v: number | null | undefined, digits = 4): string {
  if (v === null || v === undefined || Number.isNaN(v)) return '—';
  if (!Number.isFinite(v)) return v > 0 ? '∞' : '−∞';
  if (v === 0) return '0';
  const a = Math.abs(v);
  if (a >= 1e6 || a < 1e-4) return Number(v.toPrecision(digits)).toExponential();
  return Number(v.toPrecision(digits)).toString();
}

/** Columns aligned: text columns (`left`, the first by default) to the left, numbers to the right. */
function table(rows: string[][], left: readonly number[] = [0]): string {
  const widths = rows[0].map((_, c) => Math.max(...rows.map((r) => r[c].length)));
  return rows.map((r) => r.map((cell, c) => (left.includes(c) ? cell.padEnd(widths[c]) : cell.padStart(widths[c]))).join('  ')).join('\n');
}

function indent(text: string): string {
  return text.replace(/^/gm, '  ');
}

/** The clock time of elapsed time `t` (in the result's time unit) by the shared clock rule, or null without a clock. */
function clockAt(t: number, clock: ResultClock | null): string | null {
  return clock && Number.isFinite(t) ? clockLabel(t * clock.hoursPerTimeUnit, clock) : null;
}

/**
 * The per-interval table. With a clock, each start's clock time goes in a column of its own
 * when the table still fits the terminal, else on the line below the interval's row.
 */
function intervalTable(c: CompartmentFigures, clock: ResultClock | null, maxIntervals: number): string {
  const rows = [['interval', 'start', 'Cmax', 'Tmax', 'trough', 'AUC', 'Cavg']];
  const starts: (string | null)[] = [null];
  const shown = c.intervals.length <= maxIntervals ? c.intervals : [...c.intervals.slice(0, maxIntervals - 2), ...c.intervals.slice(-2)];
  shown.forEach((iv, k) => {
    if (k === maxIntervals - 2 && c.intervals.length > maxIntervals) {
      rows.push(['…', '', '', '', '', '', '']);
      starts.push(null);
    }
    rows.push([String(iv.index + 1), fmt(iv.start), fmt(iv.cmax), fmt(iv.tmax), fmt(iv.trough), fmt(iv.auc), fmt(iv.cavg)]);
    starts.push(clockAt(iv.start, clock));
  });
  if (!clock) return indent(table(rows));
  const withColumn = indent(table(rows.map((r, i) => [...r.slice(0, 2), i === 0 ? 'start (clock)' : (starts[i] ?? ''), ...r.slice(2)]), [0, 2]));
  if (withColumn.split('\n').every((line) => line.length <= lineWidth)) return withColumn;
  const lines = indent(table(rows)).split('\n');
  return lines.flatMap((line, i) => (starts[i] ? [line, `      starts ${starts[i]}`] : [line])).join('\n');
}

/** A measured level as written: its value, `< limit` below the limit of quantification, or a dash when there is none. */
function measuredText(o: ObservationFit): string {
  if (o.belowLimit) return o.limit === null ? 'below limit' : `< ${fmt(o.limit)}`;
  return fmt(o.concentration);
}

/** The compartment's measured levels beside the model at their times, with clock times when there is a clock. */
function measuredLevels(levels: readonly ObservationFit[], clock: ResultClock | null): string[] {
  if (levels.length === 0) return [];
  // One table per subject (in the order they first appear), so two patients' levels never read as one series.
  const subjects = [...new Set(levels.map((o) => o.subject))];
  return subjects.flatMap((subject) => {
    const rows = [['time', ...(clock ? ['clock time'] : []), 'measured', 'model', 'residual']];
    for (const o of levels) {
      if (o.subject !== subject) continue;
      rows.push([fmt(o.time), ...(clock ? [clockAt(o.time, clock) ?? '—'] : []), measuredText(o), fmt(o.predicted), fmt(o.residual)]);
    }
    const whose = subject === null ? (subjects.length > 1 ? ' (no subject named)' : '') : ` of ${subject}`;
    return [`  Measured levels${whose} (residual = measured − model):`, indent(table(rows, clock ? [1] : []))];
  });
}

export function summaryText(result: SimulationResult, maxIntervals = 6): string {
  const u = result.units;
  const d = result.diagnostics;
  const out: string[] = [];
  out.push(result.title, '='.repeat(Math.min(78, result.title.length)), '');
  out.push(`CAUTION: ${caution}`, '');
  const method =
    d.path === 'exact'
      ? 'exact matrix-exponential propagation (linear model; no truncation error)'
      : d.path === 'fixed'
        ? `${d.methodsUsed.join(', ')} with fixed step ${fmt(d.step)} ${u.time}`
        : `${d.methodsUsed.join(' → ')} adaptive, rtol ${fmt(d.rtol)}, atol ${fmt(d.atol)}`;
  out.push(`Method: ${method}`);
  if (d.path !== 'exact') {
    out.push(
      `Steps: ${d.acceptedSteps} accepted, ${d.rejectedSteps} rejected; right-hand-side evaluations ${d.derivativeEvaluations}; stiff switches ${d.stiffSwitches}`,
    );
  }
  const t = d.disposition;
  out.push(
    `Eigenvalues (${t.basis === 'exact' ? 'exact' : 'linearised at zero concentration'}): ${t.eigenvalues.map((e) => fmt(e.re) + (e.im ? `${e.im > 0 ? '+' : '−'}${fmt(Math.abs(e.im))}i` : '')).join(', ')} ${u.rateConstant}; terminal half-life ${fmt(t.terminalHalfLife)} ${u.time}`,
  );
  out.push(`Mass balance: dosed ${fmt(d.massBalance.dosed)} ${u.amount} = remaining ${fmt(d.massBalance.remaining)} + eliminated ${fmt(d.massBalance.eliminated)} (relative error ${fmt(d.massBalance.relativeError, 2)})`);
  for (const w of d.warnings) out.push(`WARNING: ${w}`);
  out.push('');

  for (const c of result.metrics.compartments) {
    const o = c.overall;
    out.push(`Compartment ${c.compartment} — concentration in ${u.concentration}, time in ${u.time}`);
    const tmaxClock = clockAt(o.tmax, result.clock);
    // With a clock the line breaks after Tmax's clock time, to stay within the terminal's width.
    out.push(`  Overall: Cmax ${fmt(o.cmax)} at ${fmt(o.tmax)}${tmaxClock ? ` — ${tmaxClock};\n          ` : ';'} AUC 0–end ${fmt(o.auc)} ${u.auc}; at the end ${fmt(o.cEnd)}`);
    for (const w of o.windows) {
      const edges = w.above !== null && w.below !== null ? `${fmt(w.above)}–${fmt(w.below)}` : w.above !== null ? `above ${fmt(w.above)}` : `below ${fmt(w.below)}`;
      out.push(`  Window ${edges} ${u.concentration}: ${fmt(100 * w.fractionInWindow, 3)}% of the span inside (time in ${fmt(w.timeInWindow ?? w.timeAbove ?? w.timeBelow)}, under ${fmt(w.timeUnderWindow)}, over ${fmt(w.timeOverWindow)})`);
    }
    if (c.intervals.length > 0) out.push(intervalTable(c, result.clock, maxIntervals));
    out.push(...measuredLevels(result.observations.filter((o) => o.compartment === c.compartment), result.clock));
    out.push('');
  }
  const ss = result.metrics.steadyState;
  if (ss) {
    out.push(`Steady state: ${ss.message}`);
    if (ss.reached) {
      const rows = [['compartment', 'Cmax', 'trough', 'Cavg', 'AUCτ', 'fluct.', 'accum.', 't90%', 't95%']];
      for (const c of ss.compartments) {
        rows.push([c.compartment, fmt(c.cmax), fmt(c.trough), fmt(c.cavg), fmt(c.auc), fmt(c.fluctuation), fmt(c.accumulationRatio), fmt(c.timeTo90), fmt(c.timeTo95)]);
      }
      out.push(indent(table(rows)));
    }
    out.push('');
  }
  return out.join('\n');
}
