/**
 * Dosing rate against what saturable kinetics can carry: the check that rules a steady
 * state out before any cycle is run, and the plain account of those numbers that the
 * search's messages quote (only numbers that were computed, never a guess at a cause).
 */
import type { Administration, Model } from '../../building/model.ts';
import { formatNumber } from '../../result/format-number.ts';

/** Average bioavailable input rate of the cycle, amount per time. */
export function averageDoseRate(cycle: readonly Administration[], period: number): number {
  return cycle.reduce((s, a) => s + a.amount, 0) / period;
}

/** Sum of Vmax over the saturable transfers out of each compartment that has any. */
function saturableWaysOut(model: Model): { compartment: number; vmax: number; allSaturable: boolean }[] {
  const out: { compartment: number; vmax: number; allSaturable: boolean }[] = [];
  model.compartments.forEach((_, c) => {
    const ways = model.transfers.filter((t) => t.from === c);
    const vmax = ways.reduce((s, t) => s + (t.kinetics.kind === 'saturable' ? t.kinetics.vmax : 0), 0);
    if (vmax > 0) out.push({ compartment: c, vmax, allSaturable: ways.every((t) => t.kinetics.kind === 'saturable') });
  });
  return out;
}

/**
 * Average bioavailable input rate of the cycle against the largest rate saturable kinetics can
 * carry: out of the body, and out of any compartment whose every way out is saturable (a
 * saturable absorption from a gut depot dosed faster than its Vmax piles drug up there).
 */
export function capacityProblem(model: Model, cycle: readonly Administration[], period: number): string | null {
  const u = `${model.units.amount}/${model.units.time}`;
  for (let c = 0; c < model.compartments.length; c++) {
    const ways = model.transfers.filter((t) => t.from === c);
    if (ways.length === 0 || ways.some((t) => t.kinetics.kind === 'first-order')) continue;
    const carried = ways.reduce((sum, t) => sum + (t.kinetics.kind === 'saturable' ? t.kinetics.vmax : 0), 0);
    const direct = cycle.reduce((sum, a) => sum + (a.into === c ? a.amount : 0), 0) / period;
    if (direct >= carried) {
      return `no steady state: doses reach '${model.compartments[c].id}' at ${formatNumber(direct)} ${u} on average, at or above the most its saturable ways out can carry (Vmax ${formatNumber(carried)} ${u} in all), so drug piles up there without limit`;
    }
  }
  if (model.transfers.some((t) => t.to === null && t.kinetics.kind === 'first-order')) return null;
  const capacity = model.transfers.reduce((s, t) => s + (t.to === null && t.kinetics.kind === 'saturable' ? t.kinetics.vmax : 0), 0);
  const input = averageDoseRate(cycle, period);
  if (input < capacity) return null;
  return capacity === 0
    ? 'no steady state: the model has no elimination from the body, so drug accumulates without limit'
    : `no steady state: the average dosing rate ${formatNumber(input)} ${u} is at or above the largest rate the saturable elimination can reach (Vmax = ${formatNumber(capacity)} ${u}), so concentrations rise without limit`;
}

/**
 * A value printed with enough digits to tell it from `reference` (6 significant digits, more
 * when they are needed): a dosing rate 0.00004% below Vmax must not read as Vmax itself.
 */
export function formatShare(value: number, reference: number): string {
  const gap = Math.abs(value - reference) / Math.abs(reference);
  const digits = gap > 0 ? Math.min(17, Math.max(6, Math.ceil(-Math.log10(gap)) + 2)) : 6;
  return Number.isInteger(value) ? String(value) : Number(value.toPrecision(digits)).toString();
}

/**
 * "the average dosing rate is 12 mg/h: 20% of the saturable capacity out of 'central'
 * (Vmax 60 mg/h)" — the dose rate against each compartment's saturable capacity, as
 * computed; empty for a model without saturable kinetics.
 */
export function capacityAccount(model: Model, cycle: readonly Administration[], period: number): string {
  const ways = saturableWaysOut(model);
  const u = `${model.units.amount}/${model.units.time}`;
  const rate = averageDoseRate(cycle, period);
  if (ways.length === 0) return `the model has no saturable kinetics; the average dosing rate is ${formatNumber(rate)} ${u}`;
  const parts = ways.map(
    (w) => `${formatShare((100 * rate) / w.vmax, 100)}% of the saturable capacity out of '${model.compartments[w.compartment].id}' (Vmax ${formatNumber(w.vmax)} ${u}${w.allSaturable ? '' : ', beside first-order ways out'})`,
  );
  const closest = ways.reduce((best, w) => (Math.abs(w.vmax - rate) < Math.abs(best - rate) ? w.vmax : best), ways[0].vmax);
  return `the average dosing rate is ${formatShare(rate, closest)} ${u}: ${parts.join(', ')}`;
}
