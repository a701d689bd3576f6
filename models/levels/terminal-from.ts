/**
 * The user's fixed terminal line: "from T" takes the levels at or after T that the automatic
 * choice could use too — positive, not excluded as below the limit, and after Cmax (a bolus's
 * Cmax itself included, as ncaProfile's candidates for λz). One rule for the command line's
 * --terminal-from and the scenario's nca.terminal.
 */
import { ncaProfile, type NcaInput } from './nca.ts';

/** Indices into input.times of the fixed line's points, in time order (input as checkNcaInput accepts it). */
export function terminalPointsFrom(input: NcaInput, from: number): number[] {
  const automatic: NcaInput = { ...input };
  delete automatic.terminalPoints;
  // Cmax as ncaProfile finds it: its time after the dose (the same subtraction, so the comparison is exact) and its level.
  const { figures } = ncaProfile(automatic);
  if (figures.tmax === null || figures.cmax === null) return [];
  const doseTime = input.dose?.time ?? 0;
  const bolus = input.dose?.route === 'intravascular';
  const excluded = new Set(input.excluded ?? []);
  const c = input.concentrations;
  const atCmax = input.times.findIndex((t, i) => !excluded.has(i) && t - doseTime === figures.tmax && c[i] === figures.cmax);
  if (atCmax < 0) return [];
  const points: number[] = [];
  for (let i = bolus ? atCmax : atCmax + 1; i < input.times.length; i++) if (!excluded.has(i) && c[i] > 0 && input.times[i] >= from) points.push(i);
  return points;
}
