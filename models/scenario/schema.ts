/**
 * The scenario format: what a user writes (JSON). Quantities are numbers in the
 * scenario's units or strings with a unit ("12 L", "3.5 L/h", "30 min"); the
 * normaliser converts them. Types are inferred from this schema, never written twice.
 */
import { z } from 'zod';

/** A number in the scenario's units, or a string with its own unit. */
export const quantity = z
  .union([z.number(), z.string().trim().min(1, 'must not be empty')], 'must be a number, or a string with a unit such as "12 L"')
  .describe('A number in the scenario units, or a string with a unit, e.g. "12 L", "3.5 L/h", "30 min", "0.2 1/h".');

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

/** A model quantity that depends on the subject: its typical value and its covariate relations. */
export const adjustedQuantitySchema = z
  .strictObject({
    typical: z.union([z.number(), z.string().trim().min(1, 'must not be empty')]).describe('The value for a subject at the reference values of the covariates.'),
    covariates: z.array(covariateRelationSchema).min(1).max(20).describe('Relations applied in turn, each a multiplier.'),
    name: z.string().max(40).optional().describe('A short name for tables, e.g. "CL".'),
  })
  .describe('A model quantity with covariate relations.');

/** A model quantity: a plain quantity, or one that depends on the subject's covariates. */
export const modelQuantity = z.union([z.number(), z.string().trim().min(1, 'must not be empty'), adjustedQuantitySchema], 'must be a number, a string with a unit such as "12 L", or an object with `typical` and `covariates`');

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
    at: quantity.default(0).describe('Time of the first administration.'),
    duration: quantity.optional().describe('Infusion duration: makes the dose a zero-order infusion.'),
    rate: quantity.optional().describe('Infusion rate (amount/time): the duration is amount/rate.'),
    bioavailability: z
      .union([z.number(), z.string().trim().min(1, 'must not be empty'), adjustedQuantitySchema], 'must be a fraction from 0 to 1, or a percentage such as "85%"')
      .optional()
      .describe('Fraction of the amount that arrives: a number from 0 to 1, or a percentage such as "85%" (default 1).'),
    lag: modelQuantity.optional().describe('Delay between administration and arrival.'),
    every: quantity.optional().describe('Dosing interval for repeated doses.'),
    count: z.number().int().min(1).max(100000).optional().describe('Number of doses in the series (with every).'),
    through: quantity.optional().describe('Repeat while the administration time is at or before this time (with every): the last dose is given at or before it.'),
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
    end: quantity.describe('End of the simulated span.'),
    start: quantity.default(0).describe('Start of the simulated span.'),
    step: quantity.optional().describe('Spacing of reported times.'),
    times: z.array(quantity).max(2_000_000).optional().describe('Explicit reported times (added to the step grid).'),
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
  })
  .describe('A Tidemark scenario: a compartment model, a dose schedule and what to report.');

export type ScenarioInput = z.input<typeof scenarioSchema>;
export type Scenario = z.output<typeof scenarioSchema>;
export type Quantity = z.output<typeof quantity>;
export type ModelQuantity = z.output<typeof modelQuantity>;
export type AdjustedQuantity = z.output<typeof adjustedQuantitySchema>;
export type CovariateRelation = z.output<typeof covariateRelationSchema>;
export type Subject = z.output<typeof subjectSchema>;
export type Sex = (typeof sexes)[number];
export type DoseLine = z.output<typeof doseSchema>;
export type TransferLine = z.output<typeof transferSchema>;
export type SolverMethod = (typeof solverMethods)[number];
