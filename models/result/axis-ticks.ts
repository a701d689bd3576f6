/**
 * Axis ticks a reader can use: "nice" linear steps of 1, 2 or 5 × 10ⁿ (Heckbert, "Nice
 * numbers for graph labels", Graphics Gems, 1990), hour axes stepped in whole days when the
 * span is long, and logarithmic axes labelled at each decade with unlabelled minor ticks
 * at 2…9 × 10ⁿ. Labels carry just the digits the step needs.
 */

export interface Axis {
  min: number;
  max: number;
  /** Words about the grid when it is not evident from the labels ("grid every 7 days"). */
  note?: string;
  /** Major ticks with their labels. */
  ticks: { value: number; label: string }[];
  /** Unlabelled minor ticks (log axes). */
  minor: number[];
}

/** The nice number near x: 1, 2, 5 or 10 times a power of ten (rounded or rounded up). */
export function niceNumber(x: number, round: boolean): number {
  const exponent = Math.floor(Math.log10(x));
  const fraction = x / 10 ** exponent;
  let nice: number;
  if (round) nice = fraction < 1.5 ? 1 : fraction < 3 ? 2 : fraction < 7 ? 5 : 10;
  else nice = fraction <= 1 ? 1 : fraction <= 2 ? 2 : fraction <= 5 ? 5 : 10;
  return nice * 10 ** exponent;
}

/** Decimal places that show every multiple of `step` exactly. */
function decimalsFor(step: number): number {
  for (let d = 0; d < 12; d++) {
    const scaled = step * 10 ** d;
    if (Math.abs(scaled - Math.round(scaled)) < 1e-9 * Math.max(1, scaled)) return d;
  }
  return 12;
}

export function tickLabel(value: number, decimals: number): string {
  const a = Math.abs(value);
  if (a < 1e-12) return '0';
  if (a !== 0 && (a >= 1e6 || a < 1e-4)) return Number(value.toPrecision(3)).toExponential();
  const text = value.toFixed(decimals);
  return /^-0(\.0*)?$/.test(text) ? text.slice(1) : text;
}

function stepped(min: number, max: number, step: number): Axis {
  const lo = Math.floor(min / step + 1e-9) * step;
  const hi = Math.ceil(max / step - 1e-9) * step;
  const decimals = decimalsFor(step);
  const ticks: Axis['ticks'] = [];
  for (let i = 0; lo + i * step <= hi + step * 1e-9; i++) {
    const value = lo + i * step;
    ticks.push({ value, label: tickLabel(value, decimals) });
  }
  return { min: lo, max: hi, ticks, minor: [] };
}

/** A linear axis covering [min, max] with about `target` nice steps (bounds widened to whole steps). */
export function linearAxis(min: number, max: number, target = 6): Axis {
  if (!Number.isFinite(min) || !Number.isFinite(max)) return linearAxis(0, 1, target);
  if (max <= min) {
    const pad = min === 0 ? 1 : Math.abs(min) * 0.1;
    return linearAxis(min - (min === 0 ? 0 : pad), max + pad, target);
  }
  const range = niceNumber(max - min, false);
  const step = niceNumber(range / Math.max(1, target - 1), true);
  return stepped(min, max, step);
}

/**
 * A time axis over exactly [min, max] (a time axis is not widened past the simulated span).
 * Hour spans of several days are stepped in whole days (24, 48, … h), so dosing days line up.
 */
export function timeAxis(min: number, max: number, unit: string, target = 8): Axis {
  if (!(max > min)) return linearAxis(min, max + 1, target);
  const span = max - min;
  let step: number;
  const dayLength = unit === 'h' ? 24 : unit === 'min' ? 1440 : null;
  if (dayLength !== null && span / dayLength >= 3) {
    // Whole days, weeks and multiples of weeks, so the grid falls on dosing days.
    const days = span / dayLength / Math.max(1, target - 1);
    const candidates = [1, 2, 3, 7, 14, 28, 56, 91, 182, 364];
    step = dayLength * (candidates.find((c) => c >= days) ?? 364 * niceNumber(days / 364, true));
  } else if (unit === 'h' || unit === 'min') {
    // Hour (minute) steps of 1, 2, 3, 6, 12 (5, 10, 15, 30, 60 …) read better than 2.5 or 25.
    const raw = span / Math.max(1, target - 1);
    const candidates = unit === 'h' ? [0.25, 0.5, 1, 2, 3, 6, 12, 24] : [1, 2, 5, 10, 15, 20, 30, 60, 120, 180, 360, 720, 1440];
    step = candidates.find((c) => c >= raw) ?? niceNumber(raw, true);
  } else step = niceNumber(span / Math.max(1, target - 1), true);
  const axis = stepped(min, max, step);
  let ticks = axis.ticks.filter((t) => t.value >= min - step * 1e-9 && t.value <= max + step * 1e-9);
  const days = dayLength !== null && span / dayLength >= 3 ? step / dayLength : null;
  let note = days === null ? undefined : days === 1 ? 'grid every day' : days % 7 === 0 ? `grid every ${days === 7 ? 'week' : `${days / 7} weeks`}` : `grid every ${days} days`;
  if (dayLength !== null && days !== null && span / dayLength >= 14) {
    // Long spans read better in days: "56" rather than "1344 h".
    const decimals = decimalsFor(days);
    ticks = ticks.map((t) => ({ value: t.value, label: tickLabel(t.value / dayLength, decimals) }));
    note = `labels in days, ${note}`;
  }
  return { min, max, ticks, minor: [], note };
}

function decadeLabel(exponent: number): string {
  if (exponent >= -4 && exponent <= 5) return tickLabel(10 ** exponent, Math.max(0, -exponent));
  return `1e${exponent}`;
}

/**
 * A logarithmic axis from the decade at or below `min` to the decade at or above `max`,
 * never spanning more than `maxDecades` (the low end is raised instead). When the
 * data span less than one decade the axis still shows two labelled decades.
 */
export function logAxis(min: number, max: number, maxDecades = 5): Axis {
  if (!(max > 0)) return logAxis(0.1, 1, maxDecades);
  const low = Math.max(min > 0 ? min : max * 10 ** -maxDecades, max * 10 ** -maxDecades);
  let lo = Math.floor(Math.log10(low) + 1e-9);
  const hi = Math.ceil(Math.log10(max) - 1e-9);
  if (hi - lo > maxDecades) lo = hi - maxDecades;
  if (hi === lo) lo = hi - 1;
  const ticks: Axis['ticks'] = [];
  const minor: number[] = [];
  for (let e = lo; e <= hi; e++) {
    ticks.push({ value: 10 ** e, label: decadeLabel(e) });
    if (e < hi) for (let m = 2; m <= 9; m++) minor.push(m * 10 ** e);
  }
  return { min: 10 ** lo, max: 10 ** hi, ticks, minor };
}

/**
 * The low end of a logarithmic axis for one curve: its smallest positive value once it has
 * risen to a tenth of its peak. The zero before the first dose, and the climb from it, would
 * otherwise stretch the axis over decades nobody reads. Infinity when there is none.
 */
export function lowAfterRise(values: ArrayLike<number>, peak: number): number {
  let low = Infinity;
  let risen = false;
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (!risen && v >= peak / 10) risen = true;
    if (risen && v > 0 && v < low) low = v;
  }
  return low;
}
