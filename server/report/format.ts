/**
 * How the report writes numbers, units, durations and dates. Every figure goes through
 * `fmt` (models/result/summary-text.ts), the same four-significant-digit formatting as the
 * terminal summary, so the tests can format the engine's value and find it in the text.
 */
import { fmt } from '../../models/result/summary-text.ts';

export { fmt };

/** Units as printed: the "u" that scenarios type for micro becomes µ ("ug/L" → "µg/L"). */
export function unitText(unit: string): string {
  return unit.replace(/(^|[^A-Za-z])u(g|mol|L|l)(?![A-Za-z])/g, '$1µ$2');
}

export function withUnit(value: number | null | undefined, unit: string): string {
  const text = fmt(value);
  return text === '—' ? text : `${text} ${unitText(unit)}`;
}

/**
 * A duration in the scenario's time unit, shown in minutes when it is under an hour of an
 * hour-based scenario ("lag 20 min" rather than "lag 0.3333 h").
 */
export function duration(value: number, timeUnit: string): string {
  if (timeUnit === 'h' && value > 0 && value < 1) return `${fmt(value * 60)} min`;
  if ((timeUnit === 'day' || timeUnit === 'd') && value > 0 && value < 1) return `${fmt(value * 24)} h`;
  return `${fmt(value)} ${timeUnit}`;
}

export function percent(fraction: number | null | undefined): string {
  if (fraction === null || fraction === undefined || !Number.isFinite(fraction)) return '—';
  return `${fmt(100 * fraction, 3)}%`;
}

/** "2026-03-04 09:15 UTC": the run's date and time, in UTC so that it reads the same wherever the server runs. */
export function clock(date: Date): string {
  const iso = date.toISOString();
  return `${iso.slice(0, 10)} ${iso.slice(11, 16)} UTC`;
}

/** A time written in the scenario unit, with days added for long hour-based spans ("336 h (day 14)"). */
export function timePoint(value: number, timeUnit: string): string {
  const base = `${fmt(value)} ${timeUnit}`;
  if (timeUnit === 'h' && value >= 48 && Number.isInteger(value / 24)) return `${base} (day ${fmt(value / 24)})`;
  return base;
}

/** A file-name-safe slug of a title: "Brennock 400 mg…" → "brennock-400-mg". */
export function slug(text: string, fallback = 'scenario'): string {
  const s = text
    .toLowerCase()
    .normalize('NFKD')
    .replace(/[^a-z0-9]+/g, '-')
    .replace(/^-+|-+$/g, '')
    .slice(0, 60)
    .replace(/-+$/, '');
  return s || fallback;
}

/** The report's download name: tidemark-<slug of the title>-<fingerprint>.pdf. */
export function reportFileName(title: string, fingerprint: string): string {
  return `tidemark-${slug(title)}-${fingerprint}.pdf`;
}
