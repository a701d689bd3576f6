/**
 * The scenario format: what a user writes (JSON). Quantities are numbers in the
 * scenario's units or strings with a unit ("12 L", "3.5 L/h", "30 min"); the
 * normaliser converts them. Types are inferred from this schema, never written twice.
 */
import { z } from 'zod';
import { covariateNameProblem } from './covariate-name.ts';

/** A number in the scenario's units, or a string with its own unit. */
export const quantity = z
  .union([z.number(), z.string().trim().min(1, 'must not be empty')], 'must be a number, or a string with a unit such as "12 L"')
  .describe('A number in the scenario units, or a string with a unit, e.g. "12 L", "3.5 L/h", "30 min", "0.2 1/h".');

/**
 * An instant: a quantity (elapsed time, e.g. 36 or "36 h"), or an ISO 8601 date-time counted from
 * the clock origin. Durations (lag, duration, every, step) stay plain quantities.
 */
export const instant = z
  .union([z.number(), z.string().trim().min(1, 'must not be empty')], 'must be a number, a string with a unit such as "36 h", or a date-time such as "2026-03-04T08:00"')
  .describe('A time: a number in the scenario time unit, a string with a unit ("36 h"), or an ISO 8601 date-time ("2026-03-04T08:00", "2026-03-04T08:00+01:00"), counted from the clock origin.');

/** The sexes the published covariate formulas distinguish (Cockcroft–Gault, Devine, Janmahasatian). */
export const sexes = ['female', 'male'] as const;

/**
 * How a model quantity depends on one covariate of the subject, relative to a reference value
 * of that covariate: exactly one of a power (allometric), linear or exponential coefficient,
 * or a multiplier per category.
 */
export const covariateRelationSchema = z
  .strictObject({
    on: z.string().min(1).describe('The covariate: weight, height, age, serumCreatinine, sex, a derived one (bsa, bmi, crcl, ibw, lbw) or one of the subject\'s own.'),
    power: z.number().optional().describe('typical × (covariate / reference)^power, e.g. 0.75 on weight.'),
    linear: z.number().optional().describe('typical × (1 + linear × (covariate − reference)), per unit of the covariate.'),
    exponential: z.number().optional().describe('typical × exp(exponential × (covariate − reference)), per unit of the covariate.'),
    factors: z.record(z.string(), z.number()).optional().describe('typical × factors[category] for a category covariate such as sex; a category not listed has factor 1.'),
    reference: z.union([z.number(), z.string().trim().min(1)]).optional().describe('The covariate value at which the quantity equals its typical value, e.g. "70 kg" (not used with factors).'),
  })
  .describe('A covariate relation on a model quantity.');

/** A coefficient of variation: a fraction (0.3) or a percentage ("30%"). */
export const fractionOrPercent = z.union([z.number(), z.string().trim().min(1, 'must not be empty')], 'must be a fraction such as 0.3, or a percentage such as "30%"');

/** How a quantity varies between subjects around its typical value. */
export const variationKinds = ['log-normal', 'logit-normal'] as const;

/**
 * A model quantity that depends on the subject: its typical value, its covariate relations, and
 * its between-subject variability (a coefficient of variation). At least one of the two.
 */
export const adjustedQuantitySchema = z
  .strictObject({
    typical: z.union([z.number(), z.string().trim().min(1, 'must not be empty')]).describe('The value for a subject at the reference values of the covariates (the median, when it varies between subjects).'),
    covariates: z.array(covariateRelationSchema).min(1).max(20).optional().describe('Relations applied in turn, each a multiplier.'),
    cv: fractionOrPercent.optional().describe('Between-subject variability as a coefficient of variation, e.g. "30%": log-normal by default (the SD of the log is √ln(1 + cv²)), logit-normal for fractions such as bioavailability.'),
    variation: z.enum(variationKinds).optional().describe('How the quantity varies between subjects: log-normal (default; logit-normal for bioavailability).'),
    name: z.string().regex(/^[A-Za-z][A-Za-z0-9_]{0,39}$/, 'must start with a letter and use only letters, digits or "_" (at most 40 characters)').optional().describe('A short name for tables and correlations, e.g. "CL".'),
  })
  .describe('A model quantity with covariate relations, between-subject variability, or both.');

/** A model quantity: a plain quantity, or one that depends on the subject's covariates. */
export const modelQuantity = z.union([z.number(), z.string().trim().min(1, 'must not be empty'), adjustedQuantitySchema], 'must be a number, a string with a unit such as "12 L", or an object with `typical` and `covariates` or `cv`');

export const subjectSchema = z
  .object({
    weight: quantity.optional().describe('Body weight, e.g. "72 kg".'),
    height: quantity.optional().describe('Height, e.g. "165 cm".'),
    age: quantity.optional().describe('Age, e.g. "54 year".'),
    sex: z.enum(sexes).optional(),
    serumCreatinine: quantity.optional().describe('Serum creatinine, e.g. "0.9 mg/dL" or "80 umol/L".'),
  })
  .catchall(z.union([z.number(), z.string().trim().min(1)]))
  .describe('The subject the scenario is for: body size, age, sex, renal function, and any other named covariate (a number with its unit, or a category word).');

const identifier = z
  .string()
  .regex(/^[A-Za-z][A-Za-z0-9_-]{0,39}$/, 'must start with a letter and use only letters, digits, "_" or "-" (at most 40 characters)');

export const solverMethods = [
  'auto',
  'exact',
  'dopri5',
  'dop853',
  'rosenbrock',
  'euler',
  'heun',
  'rk4',
  'abm2',
] as const;

export const unitsSchema = z
  .strictObject({
    amount: z.string().default('mg').describe('Amount unit, e.g. mg, ug, g, mmol.'),
    volume: z.string().default('L').describe('Volume unit, e.g. L, mL.'),
    time: z.string().default('h').describe('Time unit, e.g. h, min, day.'),
  })
  .describe('Units that plain numbers are read in and results are reported in.');

export const compartmentSchema = z
  .strictObject({
    id: identifier.describe('Short name used by transfers, doses and results.'),
    label: z.string().max(80).optional().describe('Longer name for display.'),
    volume: modelQuantity.optional().describe('Volume of distribution. Omit for an amount-only compartment such as a gut depot.'),
  })
  .describe('A compartment: a well-mixed space that holds drug.');

export const transferSchema = z
  .strictObject({
    from: identifier.describe('Compartment the drug leaves.'),
    to: identifier.optional().describe('Compartment the drug enters; omit for elimination from the body.'),
    k: modelQuantity.optional().describe('First-order rate constant (1/time).'),
    cl: modelQuantity.optional().describe('Clearance (volume/time); divided by the volume of `from`.'),
    vmax: modelQuantity.optional().describe('Saturable (Michaelis–Menten) maximum rate (amount/time).'),
    km: modelQuantity.optional().describe('Michaelis–Menten constant (concentration in `from`).'),
    label: z.string().max(80).optional(),
  })
  .describe('A flow of drug out of a compartment: first-order (k or cl) or saturable (vmax with km).');

export const doseSchema = z
  .strictObject({
    into: identifier.describe('Compartment that receives the dose (a depot for oral doses).'),
    amount: quantity.describe('Amount given per dose (before bioavailability); per body size as "5 mg/kg" (subject weight) or "100 mg/m2" (body surface area).'),
    at: instant.default(0).describe('Time of the first administration: elapsed time or a date-time.'),
    duration: quantity.optional().describe('Infusion duration: makes the dose a zero-order infusion.'),
    rate: quantity.optional().describe('Infusion rate (amount/time): the duration is amount/rate.'),
    bioavailability: z
      .union([z.number(), z.string().trim().min(1, 'must not be empty'), adjustedQuantitySchema], 'must be a fraction from 0 to 1, or a percentage such as "85%"')
      .optional()
      .describe('Fraction of the amount that arrives: a number from 0 to 1, or a percentage such as "85%" (default 1).'),
    lag: modelQuantity.optional().describe('Delay between administration and arrival.'),
    every: quantity.optional().describe('Dosing interval for repeated doses.'),
    count: z.number().int().min(1).max(100000).optional().describe('Number of doses in the series (with every).'),
    through: instant.optional().describe('Repeat while the administration time is at or before this time (with every): the last dose is given at or before it.'),
    label: z.string().max(80).optional().describe('Name for this dose line, e.g. "loading".'),
  })
  .describe('One dose or a repeated series of doses.');

export const thresholdSchema = z
  .strictObject({
    compartment: identifier,
    above: quantity.optional().describe('Lower edge of the target window (concentration).'),
    below: quantity.optional().describe('Upper edge of the target window (concentration).'),
  })
  .describe('A concentration window whose entry and exit times are reported.');

export const outputSchema = z
  .strictObject({
    end: instant.describe('End of the simulated span: elapsed time or a date-time.'),
    start: instant.default(0).describe('Start of the simulated span: elapsed time or a date-time.'),
    step: quantity.optional().describe('Spacing of reported times.'),
    times: z.array(instant).max(2_000_000).optional().describe('Explicit reported times (added to the step grid).'),
    thresholds: z.array(thresholdSchema).max(20).default([]),
  })
  .describe('What to report.');

export const solverSchema = z
  .strictObject({
    method: z.enum(solverMethods).default('auto').describe('auto chooses the exact linear path or the adaptive Runge–Kutta path.'),
    rtol: z.number().min(1e-13).max(0.1).default(1e-8).describe('Relative tolerance of adaptive methods.'),
    atol: z.number().min(1e-300).max(1).default(1e-10).describe('Absolute tolerance (amount units) of adaptive methods.'),
    step: quantity.optional().describe('Step of the fixed-step methods (euler, heun, rk4, abm2).'),
    maxSteps: z.number().int().min(100).max(50_000_000).default(5_000_000),
  })
  .describe('Numerical method settings.');

/** A covariate's distribution in a virtual population; drawn by its inverse CDF from one uniform number per subject. */
export const covariateDistributionSchema = z
  .strictObject({
    distribution: z.enum(['normal', 'log-normal', 'uniform', 'categories']).describe('normal (mean, sd), log-normal (median, cv), uniform (min, max) or categories (shares).'),
    mean: quantity.optional().describe('normal: the mean, e.g. "72 kg".'),
    sd: quantity.optional().describe('normal: the standard deviation, e.g. "12 kg".'),
    median: quantity.optional().describe('log-normal: the median.'),
    cv: fractionOrPercent.optional().describe('log-normal: the coefficient of variation.'),
    min: quantity.optional().describe('Lowest value: truncates normal and log-normal; the lower end of uniform.'),
    max: quantity.optional().describe('Highest value: truncates normal and log-normal; the upper end of uniform.'),
    shares: z.record(z.string(), z.number()).optional().describe('categories: each category\'s share, e.g. { "female": 0.5, "male": 0.5 }.'),
  })
  .describe('How one covariate is distributed in the population.');

/** Bounds on one exposure figure; either or both. */
const boundsSchema = z.strictObject({
  atLeast: quantity.optional().describe('The figure must be at least this.'),
  atMost: quantity.optional().describe('The figure must be at most this.'),
});

/** When a figure is read: at steady state, or in one dosing interval of the simulated span. */
export const periodSchema = z
  .union([z.enum(['steady state', 'first interval', 'last interval']), z.number().int().min(1)], 'must be "steady state", "first interval", "last interval" or a dosing interval number (1 is the first)')
  .describe('"steady state", "first interval", "last interval", or the number of a dosing interval (1 is the first).');

export const targetSchema = z
  .strictObject({
    compartment: identifier.optional().describe('Whose concentration; default the first compartment with a volume.'),
    when: periodSchema.default('steady state'),
    label: z.string().max(80).optional(),
    trough: boundsSchema.optional().describe('The concentration just before the next dose.'),
    peak: boundsSchema.optional().describe('Cmax over the dosing interval.'),
    auc24: boundsSchema.optional().describe('AUC per 24 hours: the interval\'s AUC × 24 h / interval.'),
    above: quantity.optional().describe('A concentration the level must stay above for at least `forAtLeast` of the interval.'),
    window: z.strictObject({ from: quantity, to: quantity }).optional().describe('A concentration window to stay within for at least `forAtLeast` of the interval.'),
    forAtLeast: fractionOrPercent.optional().describe('With `above` or `window`: the share of the dosing interval, e.g. "40%".'),
  })
  .describe('A target a subject attains or not: exactly one of trough, peak, auc24, above or window.');

/**
 * A covariate table's column names follow the covariate-name rule: a "." or "[" would nest the
 * cell's JSON path (rows[i].a.b). Each bad name is named once, at the first row holding it, so a
 * long table gives one problem per column, not one per row.
 */
function refuseBadColumnNames(rows: Record<string, unknown>[], ctx: z.RefinementCtx): void {
  const seen = new Set<string>();
  rows.forEach((row, i) => {
    for (const name of Object.keys(row)) {
      if (seen.has(name)) continue;
      seen.add(name);
      const problem = covariateNameProblem(name);
      if (problem !== null) ctx.addIssue({ code: 'custom', path: [i], message: `the column name ${problem}` });
    }
  });
}

export const populationSchema = z
  .strictObject({
    subjects: z.number().int().min(1).max(100_000).describe('Number of virtual subjects.'),
    seed: z.number().int().min(0).max(Number.MAX_SAFE_INTEGER).default(1).describe('Seed of the random numbers: subject i\'s numbers depend only on the seed and i.'),
    percentiles: z.array(z.number().gt(0).lt(100)).min(1).max(15).default([5, 50, 95]).describe('Percentiles of the bands and of the exposure figures.'),
    covariates: z.record(z.string(), covariateDistributionSchema).optional().describe('Covariates drawn for each subject, by name (weight, height, age, sex, serumCreatinine or the subject\'s own); the rest are the scenario subject\'s.'),
    covariateTable: z
      .strictObject({
        rows: z
          .array(z.record(z.string(), z.union([z.number(), z.string().trim().min(1)])))
          .min(1)
          .max(100_000)
          .superRefine(refuseBadColumnNames)
          .optional()
          .describe('Covariate rows, e.g. { "weight": "64 kg", "sex": "female" }; the keys are covariate names (a letter, then letters, digits or "_").'),
        file: z.string().min(1).max(500).optional().describe('A CSV file of covariate rows (header: covariate names, with the unit in brackets, e.g. "weight [kg]"); read by the command line relative to the scenario file.'),
        draw: z.enum(['in turn', 'at random']).default('in turn').describe('in turn: subject i takes row i (wrapping round); at random: each subject takes a row drawn with replacement.'),
      })
      .optional()
      .describe('Covariates taken from a table of rows instead of (or as well as) distributions.'),
    correlations: z
      .array(z.strictObject({ between: z.tuple([z.string(), z.string()]), value: z.number().min(-1).max(1) }))
      .max(200)
      .default([])
      .describe('Correlations between the variabilities of named quantities, e.g. { "between": ["CL", "V"], "value": 0.4 }.'),
    residual: z
      .strictObject({
        additive: quantity.optional().describe('SD of an additive error (concentration).'),
        proportional: fractionOrPercent.optional().describe('SD of a proportional error, e.g. "15%".'),
      })
      .optional()
      .describe('Residual error of simulated observations: additive, proportional, or both (combined).'),
    targets: z.array(targetSchema).max(20).default([]),
    periods: z.array(periodSchema).max(10).optional().describe('When exposure figures are summarised; default: steady state, the first interval and the periods the targets name.'),
    histogramBins: z.number().int().min(2).max(200).default(20),
    regimens: z
      .strictObject({
        line: z.number().int().min(0).default(0).describe('The dose line (index into doses) whose amount, interval and duration vary.'),
        amounts: z.array(quantity).min(1).max(30).optional(),
        intervals: z.array(quantity).min(1).max(30).optional(),
        durations: z.array(quantity).min(1).max(10).optional().describe('Infusion durations.'),
        ceilingAtLeast: fractionOrPercent.default(0.9).describe('A regimen keeps the ceiling targets (an upper bound only) when this share of subjects meets them.'),
      })
      .optional()
      .describe('A grid of regimens compared by attainment, every one on the same subjects.'),
  })
  .describe('A virtual population: subjects drawn from covariate distributions and between-subject variability.');

export const clockSchema = z
  .strictObject({
    origin: z.string().trim().min(1, 'must not be empty').optional().describe('The date-time elapsed time 0 stands for, e.g. "2026-03-04T08:00" or "2026-03-04T08:00+01:00". Without it, the earliest dose date-time.'),
    zone: z.string().trim().min(1, 'must not be empty').optional().describe('The UTC offset of date-times written without one, and the one clock times are shown in, e.g. "+01:00" (default UTC). A fixed offset: named zones are not read.'),
  })
  .describe('Clock times: where elapsed time 0 sits on the calendar, so instants may be written as ISO 8601 date-times.');

export const observationSchema = z
  .strictObject({
    time: instant.describe('When the sample was drawn: elapsed time ("23.75 h") or a date-time ("2026-03-05T07:45").'),
    compartment: identifier.optional().describe('The compartment the level was measured in; it must have a volume. Default: the first compartment with a volume.'),
    concentration: quantity.optional().describe('The measured level, e.g. "4.1 mg/L" (a plain number is in the scenario\'s concentration unit). May be left out for a level below the limit.'),
    subject: z.string().trim().min(1).max(80).optional().describe('Whose level, e.g. "P-017".'),
    belowLimit: z.boolean().optional().describe('true when the laboratory reported the level below its limit of quantification (give `limit`).'),
    limit: quantity.optional().describe('The limit of quantification, e.g. "0.5 mg/L".'),
    label: z.string().max(120).optional().describe('A note, e.g. "trough before dose 3".'),
    source: z.string().max(600).optional().describe('Where the row came from, e.g. "levels.csv line 7"; set by the command line when it reads an observations file.'),
  })
  .describe('A measured concentration.');

/** The mapping of a CSV's own headers onto the observation fields. */
export const observationMappingSchema = z
  .strictObject({
    time: z.string().min(1).max(120).optional(),
    compartment: z.string().min(1).max(120).optional(),
    concentration: z.string().min(1).max(120).optional(),
    subject: z.string().min(1).max(120).optional(),
    belowLimit: z.string().min(1).max(120).optional(),
    limit: z.string().min(1).max(120).optional(),
    label: z.string().min(1).max(120).optional(),
  })
  .describe('Which header of the file holds each field, when it is not the default name, e.g. { "time": "Sample drawn", "concentration": "Level" }.');

export const observationsFileSchema = z
  .strictObject({
    file: z.string().min(1).max(500).describe('A CSV file of observations (headers time, compartment, concentration, subject, below limit, limit, label; a unit may follow in brackets, e.g. "concentration [mg/L]"), read by the command line relative to the scenario file.'),
    mapping: observationMappingSchema.optional(),
  })
  .describe('Observations read from a CSV file.');

/**
 * Regimen proposals: which amounts (from the strengths or as listed), intervals and infusion
 * durations of one dose line to try, and the targets (written as population.targets) the
 * steady state is judged against. Read by models/regimen/settings.ts.
 */
export const proposeSchema = z
  .strictObject({
    line: z.number().int().min(0).default(0).describe('The dose line (index into doses) whose route, bioavailability and lag the proposals keep; its amount, interval and duration are proposed.'),
    strengths: z.array(quantity).min(1).max(10).optional().describe('The strengths available, e.g. ["250 mg", "500 mg"]: amounts are sums of at most maxUnits of them.'),
    amounts: z.array(quantity).min(1).max(60).optional().describe('The amounts to try, as given (instead of strengths).'),
    maxUnits: z.number().int().min(1).max(20).default(20).describe('With strengths: the most units (tablets, vials) in one dose.'),
    intervals: z.array(quantity).min(1).max(12).describe('The dosing intervals allowed, e.g. ["8 h", "12 h", "24 h"].'),
    durations: z.array(quantity).min(1).max(6).optional().describe('Infusion durations to try, e.g. ["30 min", "1 h"]; without them, the line\'s own duration (or a bolus).'),
    loading: z.boolean().default(false).describe('Propose a loading dose too: one dose, rounded to the strengths, that brings the first interval into the targets.'),
    targets: z.array(targetSchema).max(20).default([]).describe('What the regimen must attain, written as population.targets.'),
    rounding: z.enum(['nearest', 'up', 'down']).default('nearest').describe('How a computed loading dose is rounded to the amounts the strengths make.'),
    basis: z
      .enum(['typical', 'population'])
      .default('typical')
      .describe('typical: judged on the scenario\'s own subject (typical, or the subject given); population: every regimen given to the same virtual subjects of the `population` section and ranked by the share meeting every target.'),
  })
  .describe('Regimen proposals for review: amounts, intervals and durations ranked by how their steady state meets the targets.');

/** The area rules of non-compartmental analysis (models/levels/nca.ts names them NcaRule). */
export const ncaRules = ['linear-up-log-down', 'linear'] as const;

/**
 * One fixed terminal line: the profiles it applies to (a subject, a compartment, both, or every
 * profile when neither is given) and the instant the line starts at. The most specific entry
 * that matches a profile applies.
 */
export const ncaTerminalSchema = z
  .strictObject({
    subject: z.string().trim().min(1).max(80).optional().describe('Whose profile, as the observations name the subject, e.g. "P-017". Without it: every subject (in `compartment`, when given).'),
    compartment: identifier.optional().describe('Which compartment\'s levels. Without it: every compartment observed.'),
    from: instant.describe('The terminal line takes the levels at or after this instant that come after Cmax: elapsed time ("96 h") or a date-time ("2026-03-08T08:00"). "automatic" goes back to the best adjusted R² (to undo a wider entry for one profile).'),
  })
  .describe('The terminal line fixed by the user for some profiles.');

/** Non-compartmental analysis of the observations: the area rule and any terminal lines the user fixes. */
export const ncaSchema = z
  .strictObject({
    rule: z.enum(ncaRules).optional().describe('linear-up-log-down (default: linear trapezoids while levels rise, log-linear ones while they fall) or linear (linear trapezoids throughout).'),
    terminal: z.array(ncaTerminalSchema).max(1000).optional().describe('Terminal lines fixed by the user; profiles no entry names keep the line of the best adjusted R².'),
  })
  .describe('Settings of the non-compartmental analysis of the observations.');

/** Individual parameters from measured levels: which quantities to estimate, and how. */
export const fitSchema = z
  .strictObject({
    estimate: z
      .array(z.string().trim().min(1, 'must not be empty').max(200))
      .min(1)
      .max(20)
      .describe('The quantities to estimate: a quantity object\'s `name` ("CL") or the JSON path of any model quantity ("compartments[1].volume", "transfers[0].k", "doses[0].bioavailability", "doses[0].lag").'),
    objective: z.enum(['wls', 'map']).optional().describe('wls: weighted least squares; map: maximum a posteriori with the population\'s typical values and variability as the prior. Default: map when every estimated quantity has a cv and the population gives a residual error, else wls.'),
    belowLimit: z.enum(['exclude', 'censored']).optional().describe('Levels reported below the limit: exclude (default) leaves them out; censored counts each by the probability of a level below its limit at the prediction (needs population.residual).'),
    weighting: z.enum(['none', '1/y', '1/y2', 'residual']).optional().describe('Weights of the levels in wls: none, 1/y, 1/y² or from population.residual (1/variance at the prediction). Default: residual when population.residual is given, else 1/y2 (a proportional error, common for concentrations). map always weighs by population.residual.'),
  })
  .describe('Fitting the model to the observations: the individual\'s own values of chosen quantities.');

export const scenarioSchema = z
  .strictObject({
    title: z.string().min(1).max(200),
    description: z.string().max(2000).optional(),
    units: unitsSchema.default({ amount: 'mg', volume: 'L', time: 'h' }),
    subject: subjectSchema.optional(),
    compartments: z.array(compartmentSchema).min(1).max(40),
    transfers: z.array(transferSchema).max(200).default([]),
    doses: z.array(doseSchema).max(1000).default([]),
    output: outputSchema,
    solver: solverSchema.default({ method: 'auto', rtol: 1e-8, atol: 1e-10, maxSteps: 5_000_000 }),
    population: populationSchema.optional(),
    clock: clockSchema.optional(),
    observations: z
      .union([z.array(observationSchema).max(10_000), observationsFileSchema], 'must be a list of observations, or { "file": "levels.csv" }')
      .optional()
      .describe('Measured levels, shown beside the model\'s curve with its prediction at each time: a list, or a CSV file read by the command line.'),
    nca: ncaSchema.optional(),
    fit: fitSchema.optional(),
    propose: proposeSchema.optional(),
  })
  .describe('A Tidemark scenario: a compartment model, a dose schedule and what to report.');

export type ScenarioInput = z.input<typeof scenarioSchema>;
export type Scenario = z.output<typeof scenarioSchema>;
export type Quantity = z.output<typeof quantity>;
export type ModelQuantity = z.output<typeof modelQuantity>;
export type AdjustedQuantity = z.output<typeof adjustedQuantitySchema>;
export type CovariateRelation = z.output<typeof covariateRelationSchema>;
export type Subject = z.output<typeof subjectSchema>;
export type Population = z.output<typeof populationSchema>;
export type Target = z.output<typeof targetSchema>;
export type Propose = z.output<typeof proposeSchema>;
export type Period = z.output<typeof periodSchema>;
export type CovariateDistribution = z.output<typeof covariateDistributionSchema>;
export type Sex = (typeof sexes)[number];
export type DoseLine = z.output<typeof doseSchema>;
export type TransferLine = z.output<typeof transferSchema>;
export type Instant = z.output<typeof instant>;
export type ObservationLine = z.output<typeof observationSchema>;
export type ObservationMapping = z.output<typeof observationMappingSchema>;
export type ClockLine = z.output<typeof clockSchema>;
export type FitSettings = z.output<typeof fitSchema>;
export type NcaSettingsLine = z.output<typeof ncaSchema>;
export type NcaTerminalLine = z.output<typeof ncaTerminalSchema>;
export type SolverMethod = (typeof solverMethods)[number];
