/**
 * A plain-text summary of a result for the terminal: the figures a reviewer reads first,
 * the method and its diagnostics, and the caution that this is a simulation.
 */
import type { SimulationResult } from '../simulate.ts';

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

function table(rows: string[][]): string {
  const widths = rows[0].map((_, c) => Math.max(...rows.map((r) => r[c].length)));
  return rows.map((r) => r.map((cell, c) => (c === 0 ? cell.padEnd(widths[c]) : cell.padStart(widths[c]))).join('  ')).join('\n');
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
    out.push(`  Overall: Cmax ${fmt(o.cmax)} at ${fmt(o.tmax)}; AUC 0–end ${fmt(o.auc)} ${u.auc}; at the end ${fmt(o.cEnd)}`);
    for (const w of o.windows) {
      const edges = w.above !== null && w.below !== null ? `${fmt(w.above)}–${fmt(w.below)}` : w.above !== null ? `above ${fmt(w.above)}` : `below ${fmt(w.below)}`;
      out.push(`  Window ${edges} ${u.concentration}: ${fmt(100 * w.fractionInWindow, 3)}% of the span inside (time in ${fmt(w.timeInWindow ?? w.timeAbove ?? w.timeBelow)}, under ${fmt(w.timeUnderWindow)}, over ${fmt(w.timeOverWindow)})`);
    }
    if (c.intervals.length > 0) {
      const rows = [['interval', 'start', 'Cmax', 'Tmax', 'trough', 'AUC', 'Cavg']];
      const shown = c.intervals.length <= maxIntervals ? c.intervals : [...c.intervals.slice(0, maxIntervals - 2), ...c.intervals.slice(-2)];
      shown.forEach((iv, k) => {
        if (k === maxIntervals - 2 && c.intervals.length > maxIntervals) rows.push(['…', '', '', '', '', '', '']);
        rows.push([String(iv.index + 1), fmt(iv.start), fmt(iv.cmax), fmt(iv.tmax), fmt(iv.trough), fmt(iv.auc), fmt(iv.cavg)]);
      });
      out.push(table(rows).replace(/^/gm, '  '));
    }
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
      out.push(table(rows).replace(/^/gm, '  '));
    }
    out.push('');
  }
  return out.join('\n');
}
