/**
 * Non-compartmental analysis of one concentration profile: the figures read straight off the
 * measured levels, with no model. Units are the caller's: times in one unit, levels in one
 * concentration unit, the dose in one amount unit; every figure comes out in those (AUC in
 * concentration·time, CL in amount/(concentration·time), …). Times of figures (Tmax, Tlast)
 * are counted from the dose time.
 *
 * Every figure is a number or null; a null or a doubtful value carries a flag saying why.
 * Figures describe the levels given; they are not dosing advice.
 *
 * Chapter references are to Gibaldi & Perrier, Pharmacokinetics, 2nd ed. (Marcel Dekker, 1982),
 * recalled from memory: ch. 1 one compartment, ch. 2 several, ch. 3 multiple dosing, ch. 11
 * non-compartmental (moment) analysis, app. D the estimation of areas.
 */
import { formatNumber as num } from '../result/format-number.ts';
import { selectTerminalPhase, type LogLinearFit, type TerminalChoice } from './terminal-phase.ts';

export type NcaRoute = 'intravascular' | 'extravascular' | 'infusion';
export type NcaRule = 'linear-up-log-down' | 'linear';

export interface NcaDose {
  amount: number;
  /** The dose time, in the units of `times`. */
  time: number;
  /** intravascular: a bolus into the blood; extravascular: absorbed first (CL/F, Vz/F); infusion: at a constant rate for `duration`. */
  route: NcaRoute;
  /** Infusion length, in the units of `times`. */
  duration?: number;
}

export interface NcaInput {
  times: readonly number[];
  concentrations: readonly number[];
  dose?: NcaDose;
  /** τ: the dosing interval, for the steady-state figures over [dose time, dose time + τ]. */
  interval?: number;
  /** Default 'linear-up-log-down'. */
  rule?: NcaRule;
  /** Indices into `times` fixing the terminal line's points. */
  terminalPoints?: readonly number[];
  /** Indices of levels below the limit: excluded from every figure, and reported. */
  excluded?: readonly number[];
}

/** The figures, in the order they are shown. */
export const ncaFigureNames = [
  'cmax',
  'tmax',
  'clast',
  'tlast',
  'c0',
  'aucLast',
  'aumcLast',
  'terminalRate',
  'terminalAdjustedR2',
  'halfLife',
  'aucInf',
  'aucExtrapolatedPercent',
  'aumcInf',
  'clearance',
  'volume',
  'mrt',
  'aucTau',
  'cavg',
  'cminTau',
  'cmaxTau',
  'fluctuationPercent',
  'swingPercent',
] as const;
export type NcaFigureName = (typeof ncaFigureNames)[number];

/** A figure's dimension as powers of amount, concentration and time (the CLI writes its unit from them). */
export interface NcaDimension {
  amount: number;
  concentration: number;
  time: number;
}

export interface NcaFigureInfo {
  /** The usual short name (route-dependent names are given by `ncaLabel`). */
  label: string;
  dimension: NcaDimension | 'percent' | 'none';
  /** How it is computed, with its source, in one line. */
  rule: string;
  /** How a summary over subjects treats it: geometric mean and CV, median and range, or not at all. */
  summary: 'geometric' | 'median' | 'none';
}

const dim = (amount: number, concentration: number, time: number): NcaDimension => ({ amount, concentration, time });

/** Each figure's rule, as stated to users (and in the comments where it is computed). */
export const ncaFigureInfo: Record<NcaFigureName, NcaFigureInfo> = {
  cmax: { label: 'Cmax', dimension: dim(0, 1, 0), rule: 'highest level observed after the dose (common practice)', summary: 'geometric' },
  tmax: { label: 'Tmax', dimension: dim(0, 0, 1), rule: 'time of Cmax after the dose, the first if repeated (common practice)', summary: 'median' },
  clast: { label: 'Clast', dimension: dim(0, 1, 0), rule: 'last level above zero, as observed (common practice)', summary: 'geometric' },
  tlast: { label: 'Tlast', dimension: dim(0, 0, 1), rule: 'time of Clast after the dose', summary: 'median' },
  c0: { label: 'C0', dimension: dim(0, 1, 0), rule: 'bolus only: log-linear back-extrapolation to the dose time from the first two levels (common practice)', summary: 'geometric' },
  aucLast: { label: 'AUC0–last', dimension: dim(0, 1, 1), rule: 'trapezoids from the dose time to Tlast (Gibaldi & Perrier, Pharmacokinetics, app. D)', summary: 'geometric' },
  aumcLast: { label: 'AUMC0–last', dimension: dim(0, 1, 2), rule: 'trapezoids of t·C from the dose time to Tlast (Gibaldi & Perrier, ch. 11)', summary: 'geometric' },
  terminalRate: { label: 'λz', dimension: dim(0, 0, -1), rule: '−slope of ln C on t, last ≥ 3 levels after Cmax by best adjusted R² (ties within 1e-4 to more points)', summary: 'geometric' },
  terminalAdjustedR2: { label: 'adjusted R²', dimension: 'none', rule: '1 − (1 − R²)(n − 1)/(n − 2) of the terminal line', summary: 'none' },
  halfLife: { label: 't½', dimension: dim(0, 0, 1), rule: 'ln 2/λz', summary: 'geometric' },
  aucInf: { label: 'AUC0–∞', dimension: dim(0, 1, 1), rule: 'AUC0–last + Clast/λz, observed Clast (Gibaldi & Perrier, app. D)', summary: 'geometric' },
  aucExtrapolatedPercent: { label: 'AUC extrapolated', dimension: 'percent', rule: '100·(Clast/λz)/AUC0–∞; flagged above 20 % (common practice)', summary: 'geometric' },
  aumcInf: { label: 'AUMC0–∞', dimension: dim(0, 1, 2), rule: 'AUMC0–last + Clast·Tlast/λz + Clast/λz² (Gibaldi & Perrier, ch. 11)', summary: 'geometric' },
  clearance: { label: 'CL', dimension: dim(1, -1, -1), rule: 'dose/AUC0–∞, or dose/AUCτ at steady state (Gibaldi & Perrier, ch. 1, 11)', summary: 'geometric' },
  volume: { label: 'Vz', dimension: dim(1, -1, 0), rule: 'dose/(λz·AUC0–∞), or dose/(λz·AUCτ) at steady state (Gibaldi & Perrier, ch. 11)', summary: 'geometric' },
  mrt: { label: 'MRT', dimension: dim(0, 0, 1), rule: 'AUMC0–∞/AUC0–∞, minus half the infusion time for an infusion (Gibaldi & Perrier, ch. 11)', summary: 'geometric' },
  aucTau: { label: 'AUCτ', dimension: dim(0, 1, 1), rule: 'trapezoids from the dose time to dose time + τ, starting from the level drawn at the dose, else the last drawn within τ/4 before it, else the level at dose time + τ (C(0) = C(τ) at steady state), else the lowest in the interval; the last two flagged (Gibaldi & Perrier, ch. 3; the quarter is our rule)', summary: 'geometric' },
  cavg: { label: 'Cavg', dimension: dim(0, 1, 0), rule: 'AUCτ/τ (Gibaldi & Perrier, ch. 3)', summary: 'geometric' },
  cminTau: { label: 'Cmin', dimension: dim(0, 1, 0), rule: 'lowest level observed in the interval, with the pre-dose level when one was drawn within τ/4 before the dose (common practice; the quarter is our rule)', summary: 'geometric' },
  cmaxTau: { label: 'Cmax (τ)', dimension: dim(0, 1, 0), rule: 'highest level observed in the interval (common practice)', summary: 'geometric' },
  fluctuationPercent: { label: 'fluctuation', dimension: 'percent', rule: '100·(Cmax − Cmin)/Cavg over the interval (common practice)', summary: 'geometric' },
  swingPercent: { label: 'swing', dimension: 'percent', rule: '100·(Cmax − Cmin)/Cmin over the interval (common practice)', summary: 'geometric' },
};

/** The name of a figure for this route: CL/F and Vz/F after an extravascular dose, whose bioavailability F is unknown. */
export function ncaLabel(figure: NcaFigureName, route: NcaRoute | null): string {
  const label = ncaFigureInfo[figure].label;
  return route === 'extravascular' && (figure === 'clearance' || figure === 'volume') ? `${label}/F` : label;
}

export interface NcaFlag {
  /** The figure concerned, or 'levels' for the data as a whole. */
  figure: NcaFigureName | 'levels';
  message: string;
}

export interface NcaTerminal {
  /** Indices into the input's `times`. */
  indices: number[];
  /** Their times, as given. */
  times: number[];
  r2: number;
  adjustedR2: number | null;
  /** ln C at the input's time 0 on the line. */
  intercept: number;
  chosenBy: TerminalChoice;
}

export interface NcaResult {
  figures: Record<NcaFigureName, number | null>;
  terminal: NcaTerminal | null;
  /** The levels left out as below the limit, by input index and time. */
  excluded: { index: number; time: number }[];
  rule: NcaRule;
  route: NcaRoute | null;
  flags: NcaFlag[];
}

/** Thrown for input no profile can be computed from; `problems` says each thing wrong. */
export class NcaInputError extends Error {
  constructor(readonly problems: string[]) {
    super(problems.join('; '));
    this.name = 'NcaInputError';
  }
}

/** Adjusted R² below this is flagged: a common-practice threshold for a doubtful terminal line. */
export const lowAdjustedR2 = 0.9;
/** Extrapolated share of AUC0–∞ above this (percent) is flagged: common practice. */
export const highExtrapolatedPercent = 20;

/**
 * A level drawn within this share of τ before a dose is that dose's pre-dose (trough) level:
 * troughs are drawn shortly before a dose, and a level drawn earlier belongs to an earlier
 * interval. The quarter is our rule; the scenario path (nca-scenario.ts) and a levels file share it.
 */
export const PRE_DOSE_SHARE = 0.25;

/** Whether a level at `t` may be the pre-dose level of the dose at `doseTime` (interval τ): before it (or at it, for a bolus) and no more than τ/4 before. */
export function isPreDoseTime(t: number, doseTime: number, tau: number, bolus: boolean): boolean {
  return (bolus ? t <= doseTime : t < doseTime) && t >= doseTime - PRE_DOSE_SHARE * tau;
}

/** Two instants taken as one: equal to within 1e-9 of the interval (unit conversion leaves a few ulps; no sampling schedule is that fine). */
function sameInstant(a: number, b: number, scale: number): boolean {
  return Math.abs(a - b) <= 1e-9 * Math.max(Math.abs(scale), Math.abs(b));
}

const isIndex = (i: number, n: number) => Number.isInteger(i) && i >= 0 && i < n;

/** Every problem with the input, as sentences; empty when ncaProfile can run. */
export function checkNcaInput(input: NcaInput): string[] {
  const problems: string[] = [];
  const { times, concentrations: c, dose, interval } = input;
  const n = times.length;
  const excluded = new Set(input.excluded ?? []);
  if (c.length !== n) problems.push(`times has ${n} values and concentrations ${c.length}; they go in pairs`);
  if (n === 0) problems.push('there are no levels');
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(times[i])) problems.push(`times[${i}] is not a finite number`);
    else if (i > 0 && !(times[i] > times[i - 1])) problems.push(`times[${i}] (${times[i]}) does not come after times[${i - 1}] (${times[i - 1]}); times must increase`);
    if (i < c.length && !excluded.has(i)) {
      if (!Number.isFinite(c[i])) problems.push(`concentrations[${i}] is not a finite number`);
      else if (c[i] < 0) problems.push(`concentrations[${i}] is negative (${c[i]}); a level cannot be below zero`);
    }
  }
  if (dose) {
    if (!(Number.isFinite(dose.amount) && dose.amount > 0)) problems.push('dose.amount must be a number above zero');
    if (!Number.isFinite(dose.time)) problems.push('dose.time must be a finite number');
    if (dose.duration !== undefined && !(Number.isFinite(dose.duration) && dose.duration > 0)) problems.push('dose.duration must be a number above zero');
    if (dose.duration !== undefined && dose.route !== 'infusion') problems.push('dose.duration is for an infusion only');
  }
  if (interval !== undefined && !(Number.isFinite(interval) && interval > 0)) problems.push('interval must be a number above zero');
  for (const i of input.excluded ?? []) if (!isIndex(i, n)) problems.push(`excluded index ${i} is not an index of times`);
  for (const i of input.terminalPoints ?? []) {
    if (!isIndex(i, n)) problems.push(`terminal point ${i} is not an index of times`);
    else if (excluded.has(i)) problems.push(`terminal point ${i} is a level excluded as below the limit`);
  }
  return problems;
}

/** A point of the profile actually integrated: time since the dose, level, and its input index (−1 for a level put in at the dose time). */
interface Profile {
  t: Float64Array;
  c: Float64Array;
  source: Int32Array;
}

/** Whether a segment is taken log-linear: the log-down rule, both levels above zero and falling (common practice). */
function isLogSegment(c1: number, c2: number, rule: NcaRule): boolean {
  return rule === 'linear-up-log-down' && c1 > 0 && c2 > 0 && c2 < c1;
}

/** ln(c1/c2) for c1 > c2 > 0, as −log1p(−(c1 − c2)/c1), accurate when the two are close (c1 − c2 is then exact, Sterbenz). */
function logRatio(c1: number, c2: number): number {
  return -Math.log1p(-(c1 - c2) / c1);
}

/** ∫C dt over one segment: the linear trapezoid, or the exact integral of the log-linear interpolant Δt(c1 − c2)/ln(c1/c2) (Gibaldi & Perrier, app. D). */
export function segmentArea(t1: number, c1: number, t2: number, c2: number, rule: NcaRule): number {
  const dt = t2 - t1;
  if (!isLogSegment(c1, c2, rule)) return (dt * (c1 + c2)) / 2;
  return (dt * (c1 - c2)) / logRatio(c1, c2);
}

/**
 * ∫t·C dt over one segment: the trapezoid of t·C (common practice for the linear rule), or the
 * exact integral of t times the log-linear interpolant, Δt(t1c1 − t2c2)/L + Δt²(c1 − c2)/L² with L = ln(c1/c2).
 */
export function segmentMoment(t1: number, c1: number, t2: number, c2: number, rule: NcaRule): number {
  const dt = t2 - t1;
  if (!isLogSegment(c1, c2, rule)) return (dt * (t1 * c1 + t2 * c2)) / 2;
  const L = logRatio(c1, c2);
  return (dt * (t1 * c1 - t2 * c2)) / L + (dt * dt * (c1 - c2)) / (L * L);
}

/** The level at t inside [t1, t2] on the segment's interpolant (log-linear when the segment is, else linear). */
function levelWithin(t1: number, c1: number, t2: number, c2: number, t: number, rule: NcaRule): number {
  const f = (t - t1) / (t2 - t1);
  return isLogSegment(c1, c2, rule) ? c1 * Math.exp(-f * logRatio(c1, c2)) : c1 + f * (c2 - c1);
}

/** ∫C dt over the profile from its start to `end` (≤ its last time), the last segment cut at `end`. */
function areaTo(p: Profile, end: number, rule: NcaRule): number {
  let area = 0;
  for (let j = 1; j < p.t.length && p.t[j - 1] < end; j++) {
    const t2 = Math.min(p.t[j], end);
    const c2 = t2 === p.t[j] ? p.c[j] : levelWithin(p.t[j - 1], p.c[j - 1], p.t[j], p.c[j], t2, rule);
    area += segmentArea(p.t[j - 1], p.c[j - 1], t2, c2, rule);
  }
  return area;
}

const emptyFigures = (): Record<NcaFigureName, number | null> => Object.fromEntries(ncaFigureNames.map((k) => [k, null])) as Record<NcaFigureName, number | null>;

/**
 * The non-compartmental figures of one profile. Throws NcaInputError for input that
 * checkNcaInput refuses (callers with user data check first and report those problems).
 */
export function ncaProfile(input: NcaInput): NcaResult {
  const problems = checkNcaInput(input);
  if (problems.length > 0) throw new NcaInputError(problems);
  const rule = input.rule ?? 'linear-up-log-down';
  const dose = input.dose ?? null;
  const route = dose?.route ?? null;
  const bolus = route === 'intravascular';
  const { times, concentrations } = input;
  const tau = input.interval ?? null;
  const figures = emptyFigures();
  const flags: NcaFlag[] = [];
  const flag = (figure: NcaFlag['figure'], message: string) => flags.push({ figure, message });

  // Levels below the limit are left out of every figure (for now; a censored treatment may come later) and named.
  const excludedSet = new Set(input.excluded ?? []);
  const excluded = [...excludedSet].sort((a, b) => a - b).map((index) => ({ index, time: times[index] }));
  for (const e of excluded) flag('levels', `the level at time ${e.time} is below the limit and is excluded from every figure`);

  // Without a dose, the dose time is taken as 0 of the times given.
  const doseTime = dose?.time ?? 0;
  if (!dose) flag('levels', 'no dose given: areas start at time 0; CL and Vz need a dose');
  const used: number[] = [];
  for (let i = 0; i < times.length; i++) if (!excludedSet.has(i)) used.push(i);
  // A bolus enters at an instant; a level recorded at that instant is taken as drawn before it.
  const isPre = (i: number) => (bolus ? times[i] <= doseTime : times[i] < doseTime);
  const pre = used.filter(isPre);
  const post = used.filter((i) => !isPre(i));
  if (post.length === 0) {
    flag('levels', 'no level after the dose time: no figure can be read');
    return { figures, terminal: null, excluded, rule, route, flags };
  }
  const lastBefore = pre.length > 0 ? pre[pre.length - 1] : null;
  // At steady state the pre-dose level is the last one drawn within τ/4 before the dose (PRE_DOSE_SHARE); an earlier one is of an earlier interval.
  const lastPre = tau !== null && lastBefore !== null && isPreDoseTime(times[lastBefore], doseTime, tau, bolus) ? lastBefore : null;
  if (pre.length > 0 && tau === null) flag('levels', `${pre.length} level${pre.length === 1 ? '' : 's'} before the dose time ${bolus ? '(or at the bolus) ' : ''}not used: without an interval, areas start at the dose`);
  const unusedPre = pre.filter((i) => i !== lastPre);
  if (tau !== null && unusedPre.length > 0) {
    const at = unusedPre.map((i) => num(times[i])).join(', ');
    flag('levels', `${unusedPre.length === 1 ? `the level at ${at} is` : `the levels at ${at} are`} not used: only the last level drawn within τ/4 before the dose (from ${num(doseTime - PRE_DOSE_SHARE * tau)} to ${num(doseTime)}) counts as its pre-dose level`);
  }

  // The level at the dose time, where the area starts.
  let start: number | null = null;
  const atDose = !bolus && times[post[0]] === doseTime;
  if (bolus) {
    // C0 by log-linear back-extrapolation from the first two levels after the bolus (common practice); never above-the-line guesses.
    const [i1, i2] = post;
    const c1 = concentrations[i1];
    if (i2 !== undefined && c1 > 0 && concentrations[i2] > 0 && concentrations[i2] < c1) {
      const t1 = times[i1] - doseTime;
      const c2 = concentrations[i2];
      start = c1 * Math.exp((logRatio(c1, c2) * t1) / (times[i2] - times[i1]));
      flag('c0', `C0 back-extrapolated log-linearly to the dose time from the levels at ${times[i1]} and ${times[i2]} (common practice for a bolus)`);
    } else {
      start = c1;
      flag('c0', `the first two levels after the bolus do not fall, so C0 is taken as the first level (${c1}), not extrapolated`);
    }
    figures.c0 = start;
  } else if (!atDose) {
    if (tau === null) start = 0; // a single dose given outside the blood: nothing there yet (common practice)
    else if (lastPre !== null) {
      start = concentrations[lastPre];
      flag('aucTau', `the pre-dose level at ${num(times[lastPre])} (within τ/4 before the dose) is taken as the level at the dose time (steady state)`);
    } else {
      // Fallback: at steady state the level at the end of the interval equals the level at its start, C(τ) = C(0) (Gibaldi & Perrier, ch. 3).
      const none = `no pre-dose level within τ/4 before the dose (from ${num(doseTime - PRE_DOSE_SHARE * tau)} to ${num(doseTime)})`;
      const endLevel = post.find((i) => sameInstant(times[i], doseTime + tau, tau));
      if (endLevel !== undefined) {
        start = concentrations[endLevel];
        flag('aucTau', `${none}: the level at the end of the interval (${num(times[endLevel])}) is taken as the level at the dose time, C(0) = C(τ) at steady state (fallback)`);
      } else {
        const inInterval = post.filter((i) => times[i] <= doseTime + tau).map((i) => concentrations[i]);
        if (inInterval.length === 0) flag('aucTau', 'no level inside the interval: no steady-state figures');
        else {
          start = inInterval.reduce((a, b) => Math.min(a, b), Infinity);
          flag('aucTau', `${none} and none at the end of the interval (${num(doseTime + tau)}): the lowest level in the interval (${num(start)}) is taken as the level at the dose time (fallback)`);
        }
      }
    }
  }

  // The profile integrated: times from the dose.
  const m = post.length + (start === null ? 0 : 1);
  const p: Profile = { t: new Float64Array(m), c: new Float64Array(m), source: new Int32Array(m) };
  let k = 0;
  if (start !== null) {
    p.t[0] = 0;
    p.c[0] = start;
    p.source[0] = -1;
    k = 1;
  }
  for (const i of post) {
    p.t[k] = times[i] - doseTime;
    p.c[k] = concentrations[i];
    p.source[k] = i;
    k++;
  }

  // Cmax, Tmax: the highest observed level after the dose, the first if repeated (common practice).
  let imax = -1;
  for (let j = 0; j < m; j++) if (p.source[j] >= 0 && (imax < 0 || p.c[j] > p.c[imax])) imax = j;
  figures.cmax = p.c[imax];
  figures.tmax = p.t[imax];
  // Clast, Tlast: the last observed level above zero (common practice).
  let ilast = -1;
  for (let j = m - 1; j >= 0; j--) if (p.source[j] >= 0 && p.c[j] > 0) {
    ilast = j;
    break;
  }
  if (ilast < 0) {
    flag('levels', 'every level after the dose is zero: no area, no terminal line');
    figures.aucLast = 0;
    figures.aumcLast = 0;
    return { figures, terminal: null, excluded, rule, route, flags };
  }
  const clast = p.c[ilast];
  const tlast = p.t[ilast];
  figures.clast = clast;
  figures.tlast = tlast;

  // AUC0–last and AUMC0–last: segment by segment from the dose time to Tlast (Gibaldi & Perrier, app. D; ch. 11).
  let auc = 0;
  let aumc = 0;
  for (let j = 1; j <= ilast; j++) {
    auc += segmentArea(p.t[j - 1], p.c[j - 1], p.t[j], p.c[j], rule);
    aumc += segmentMoment(p.t[j - 1], p.c[j - 1], p.t[j], p.c[j], rule);
  }
  figures.aucLast = auc;
  figures.aumcLast = aumc;

  // λz over the observed positive levels after Cmax (a bolus's Cmax is already on the falling limb, so it may take part).
  const candidates: number[] = [];
  for (let j = bolus ? imax : imax + 1; j <= ilast; j++) if (p.source[j] >= 0 && p.c[j] > 0) candidates.push(p.source[j]);
  const phase = selectTerminalPhase(times, concentrations, candidates, input.terminalPoints);
  let fit: LogLinearFit | null = null;
  let terminal: NcaTerminal | null = null;
  if (!phase.ok) flag('terminalRate', `no terminal rate: ${phase.reason}`);
  else {
    fit = phase.fit;
    terminal = { indices: phase.indices, times: phase.indices.map((i) => times[i]), r2: fit.r2, adjustedR2: fit.adjustedR2, intercept: fit.intercept, chosenBy: phase.chosenBy };
    figures.terminalRate = fit.rate;
    figures.terminalAdjustedR2 = fit.adjustedR2;
    if (fit.n < 3) {
      const why = phase.chosenBy === 'fixed' ? ' (fixed)' : ' (the only ones after Cmax)';
      flag('terminalRate', `the terminal line has only ${fit.n} points${why}; the rule asks for at least 3: λz and every figure from it (t½, AUC0–∞, CL, Vz, MRT) are doubtful`);
    }
    if (fit.adjustedR2 !== null && fit.adjustedR2 < lowAdjustedR2) flag('terminalRate', `adjusted R² ${fit.adjustedR2.toFixed(4)} is below ${lowAdjustedR2} (a common-practice threshold): the terminal line is doubtful`);
    if (phase.indices[phase.indices.length - 1] !== p.source[ilast]) flag('terminalRate', 'the fixed points do not end at Tlast');
  }
  const lz = fit?.rate ?? null;
  if (lz !== null) {
    figures.halfLife = Math.LN2 / lz; // t½ = ln 2/λz
    const tail = clast / lz; // ∫ from Tlast to ∞ of Clast·e^(−λz(t − Tlast))
    const aucInf = auc + tail;
    figures.aucInf = aucInf;
    figures.aucExtrapolatedPercent = (100 * tail) / aucInf;
    if (figures.aucExtrapolatedPercent > highExtrapolatedPercent) {
      flag('aucInf', `${figures.aucExtrapolatedPercent.toFixed(1)} % of AUC0–∞ is extrapolated (more than ${highExtrapolatedPercent} %, common practice): AUC0–∞ and the figures from it are doubtful`);
    }
    figures.aumcInf = aumc + (clast * tlast) / lz + clast / (lz * lz); // ∫ t·Clast·e^(−λz(t − Tlast)) from Tlast to ∞
  }

  // The interval at steady state: from the dose time to dose time + τ.
  let aucTau: number | null = null;
  // The interval's figures need the level at the dose time (p.t[0] = 0); without it they are left out, as flagged above.
  if (tau !== null && p.t[0] === 0) {
    const end = tau;
    const lastT = p.t[m - 1];
    if (end <= lastT) aucTau = areaTo(p, end, rule);
    else if (lz !== null && p.c[m - 1] > 0) {
      // Beyond the last level: on the terminal line from Clast (the level there is Clast·e^(−λz(τ − Tlast))).
      const cEnd = clast * Math.exp(-lz * (end - tlast));
      aucTau = areaTo(p, lastT, rule) + (clast - cEnd) / lz;
      flag('aucTau', `the last level (${lastT + doseTime}) comes before the end of the interval (${doseTime + end}): AUCτ is completed on the terminal line`);
    } else if (p.c[m - 1] === 0) aucTau = areaTo(p, lastT, rule);
    else flag('aucTau', `the levels end before the end of the interval (${doseTime + end}) and there is no terminal rate to complete it`);
    figures.aucTau = aucTau;
    if (aucTau !== null) figures.cavg = aucTau / tau; // Cavg = AUCτ/τ
    // Cmin and Cmax over the interval: the observed levels in it and the pre-dose level within τ/4 (the trough of the interval before).
    const levels: number[] = [];
    for (let j = 0; j < m; j++) if (p.source[j] >= 0 && (p.t[j] <= end || sameInstant(p.t[j], end, tau))) levels.push(p.c[j]);
    if (lastPre !== null) levels.push(concentrations[lastPre]);
    // Reduced, not spread: a long profile would overflow the argument list.
    figures.cminTau = levels.reduce((a, b) => Math.min(a, b), Infinity);
    figures.cmaxTau = levels.reduce((a, b) => Math.max(a, b), -Infinity);
    if (figures.cavg !== null && figures.cavg > 0) figures.fluctuationPercent = (100 * (figures.cmaxTau - figures.cminTau)) / figures.cavg;
    if (figures.cminTau > 0) figures.swingPercent = (100 * (figures.cmaxTau - figures.cminTau)) / figures.cminTau;
    else flag('swingPercent', 'Cmin is zero: no swing');
  }

  // CL, Vz (CL/F, Vz/F): dose over the area; at steady state AUCτ equals the single dose's AUC0–∞ (Gibaldi & Perrier, ch. 3).
  const area = tau !== null ? aucTau : figures.aucInf;
  if (dose && area !== null && area > 0) {
    figures.clearance = dose.amount / area;
    if (lz !== null) figures.volume = dose.amount / (lz * area);
  }
  if (dose && area === null) flag('clearance', tau !== null ? 'no AUCτ: no clearance' : 'no AUC0–∞ (no terminal rate): no clearance');
  // MRT = AUMC0–∞/AUC0–∞ of a single dose, less half the infusion time (Gibaldi & Perrier, ch. 11).
  if (tau !== null) flag('mrt', 'not given at steady state: MRT needs the single dose\'s AUMC0–∞');
  else if (figures.aumcInf !== null && figures.aucInf !== null) {
    if (route === 'infusion') {
      if (dose?.duration === undefined) flag('mrt', 'an infusion needs its duration for MRT');
      else figures.mrt = figures.aumcInf / figures.aucInf - dose.duration / 2;
    } else figures.mrt = figures.aumcInf / figures.aucInf;
  }
  return { figures, terminal, excluded, rule, route, flags };
}
