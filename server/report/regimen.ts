/**
 * The regimen in words: one row per dose line as the user wrote it — "400 mg into gut every
 * 12 h × 14 from 0 h, F 0.85, lag 20 min" — never dose by dose, so a year of twice-daily
 * dosing is still one line. When the scenario has a clock, each line also gets the clock times of
 * its first and last dose in the span.
 */
import type { DoseLineSummary, Model } from '../../models/building/model.ts';
import { clockTimeAt } from './clock-time.ts';
import { duration, fmt, timePoint, unitText, withUnit } from './format.ts';

export interface RegimenRow {
  line: string;
  label: string;
  description: string;
  /** Doses of the line inside the simulated span. */
  doses: string;
  /** Nominal total, and what arrives after bioavailability. */
  total: string;
  /** Clock times of the first and the last dose given in the span; null without a clock. */
  clock: string | null;
}

/** "first 2026-03-04 08:00 (+01:00)\nlast 2026-03-06 08:00 (+01:00)", one line for a single dose; null without a clock or a dose in the span. */
export function doseLineClock(line: DoseLineSummary, model: Model): string | null {
  if (line.count === 0) return null;
  const first = clockTimeAt(line.firstGiven, model);
  if (first === null) return null;
  if (line.count === 1 || line.every === null) return first;
  return `first ${first}\nlast ${clockTimeAt(line.firstGiven + (line.count - 1) * line.every, model) ?? '—'}`;
}

export function describeDoseLine(line: DoseLineSummary, model: Model): string {
  const u = model.units;
  const into = model.compartments[line.into].id;
  const parts: string[] = [];
  let head = `${withUnit(line.nominal, u.amount)} into ${into}`;
  if (line.every !== null && line.count + line.beyondEnd > 1) {
    head += ` every ${duration(line.every, u.time)} × ${line.count} from ${timePoint(line.firstGiven, u.time)}`;
  } else {
    head += ` at ${timePoint(line.firstGiven, u.time)}`;
  }
  parts.push(head);
  if (line.duration > 0) {
    parts.push(`infused over ${duration(line.duration, u.time)} (${fmt(line.nominal / line.duration)} ${unitText(u.amount)}/${u.time})`);
  }
  if (line.bioavailability !== 1) parts.push(`F ${fmt(line.bioavailability)}`);
  if (line.lag > 0) parts.push(`lag ${duration(line.lag, u.time)}`);
  let text = parts.join(', ');
  if (line.beyondEnd > 0) {
    text += ` (${line.beyondEnd} more asked for, at or after the end of the span: not simulated)`;
  }
  return text;
}

export function regimenRows(model: Model): RegimenRow[] {
  const amount = model.units.amount;
  return model.doseLines.map((line) => {
    const nominal = line.nominal * line.count;
    const arriving = nominal * line.bioavailability;
    return {
      line: String(line.line + 1),
      label: line.label ?? '—',
      description: describeDoseLine(line, model),
      doses: String(line.count),
      total: line.bioavailability === 1 ? withUnit(nominal, amount) : `${withUnit(nominal, amount)}, of which ${withUnit(arriving, amount)} arrives`,
      clock: doseLineClock(line, model),
    };
  });
}

/** Given times of every administration, for the dose marks on the plots (with infusion spans). */
export function doseMarks(model: Model): { given: number; arrival: number; duration: number; line: number }[] {
  return model.administrations.map((a) => ({ given: a.given, arrival: a.arrival, duration: a.duration, line: a.line }));
}
