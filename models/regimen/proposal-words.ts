/**
 * How a proposal reads, for every place that shows one — the command line, the report and the
 * page. Pure and light (types and number formatting only), so the page imports it without the
 * solver that propose.ts brings.
 */
import { formatNumber } from '../result/format-number.ts';
import type { LoadingDose, Proposal } from './propose.ts';

/** A proposal's loading dose as the typical basis simulates it, or null (none, or the population basis's amount alone). */
export function simulatedLoading(p: Proposal): LoadingDose | null {
  return p.loading !== null && 'timeToWindow' in p.loading ? p.loading : null;
}

/** "500 mg every 12 h over 30 min" in the model's units; `space` joins each number to its unit (a no-break space keeps them together in a wrapping cell). */
export function regimenWords(p: { amount: number; interval: number; duration: number }, units: { amount: string; time: string }, space = ' '): string {
  const q = (v: number, unit: string) => `${formatNumber(v)}${space}${unit}`;
  return `${q(p.amount, units.amount)} every ${q(p.interval, units.time)}${p.duration > 0 ? ` over ${q(p.duration, units.time)}` : ''}`;
}
