/** Scenarios for the regimen tests, and the independent check: a proposal simulated by simulate() out to many intervals. */
import { readFileSync } from 'node:fs';
import { proposeRegimens, type ProposeResult } from '../../models/regimen/propose.ts';
import { simulate } from '../../models/simulate.ts';

export function sample(name: string): Record<string, unknown> {
  return JSON.parse(readFileSync(new URL(`../../samples/${name}`, import.meta.url), 'utf8')) as Record<string, unknown>;
}

/** The proposals for a scenario that must be read without problems. */
export function propose(s: unknown): ProposeResult {
  const r = proposeRegimens(s);
  if (!r.ok) throw new Error(JSON.stringify(r.problems));
  return r.value;
}

/** The scenario with its dose lines replaced by one regimen (and a loading dose before it), simulated for `count` intervals. */
export function simulateRegimen(
  scenario: Record<string, unknown>,
  r: { amount: number; interval: number; duration: number; into: string; loading?: number; bioavailability?: number },
  count: number,
  compartment: string,
) {
  const dose = (amount: number, at: number, n: number) => ({
    into: r.into,
    amount,
    at,
    ...(n > 1 ? { every: r.interval, count: n } : {}),
    ...(r.duration > 0 ? { duration: r.duration } : {}),
    ...(r.bioavailability !== undefined ? { bioavailability: r.bioavailability } : {}),
  });
  const doses = r.loading !== undefined ? [dose(r.loading, 0, 1), dose(r.amount, r.interval, count - 1)] : [dose(r.amount, 0, count)];
  const { propose: _drop, ...rest } = scenario;
  const s = { ...rest, doses, output: { end: count * r.interval, step: r.interval } };
  const out = simulate(s);
  if (!out.ok) throw new Error(JSON.stringify(out.problems));
  const figures = out.value.metrics.compartments.find((c) => c.compartment === compartment);
  if (!figures) throw new Error(`no figures for ${compartment}`);
  return figures.intervals;
}
