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
    volume: quantity.optional().describe('Volume of distribution. Omit for an amount-only compartment such as a gut depot.'),
  })
  .describe('A compartment: a well-mixed space that holds drug.');

export const transferSchema = z
  .strictObject({
    from: identifier.describe('Compartment the drug leaves.'),
    to: identifier.optional().describe('Compartment the drug enters; omit for elimination from the body.'),
    k: quantity.optional().describe('First-order rate constant (1/time).'),
    cl: quantity.optional().describe('Clearance (volume/time); divided by the volume of `from`.'),
    vmax: quantity.optional().describe('Saturable (Michaelis–Menten) maximum rate (amount/time).'),
    km: quantity.optional().describe('Michaelis–Menten constant (concentration in `from`).'),
    label: z.string().max(80).optional(),
  })
  .describe('A flow of drug out of a compartment: first-order (k or cl) or saturable (vmax with km).');

export const doseSchema = z
  .strictObject({
    into: identifier.describe('Compartment that receives the dose (a depot for oral doses).'),
    amount: quantity.describe('Amount given per dose (before bioavailability).'),
    at: quantity.default(0).describe('Time of the first administration.'),
    duration: quantity.optional().describe('Infusion duration: makes the dose a zero-order infusion.'),
    rate: quantity.optional().describe('Infusion rate (amount/time): the duration is amount/rate.'),
    bioavailability: z
      .union([z.number(), z.string().trim().min(1, 'must not be empty')], 'must be a fraction from 0 to 1, or a percentage such as "85%"')
      .optional()
      .describe('Fraction of the amount that arrives: a number from 0 to 1, or a percentage such as "85%" (default 1).'),
    lag: quantity.optional().describe('Delay between administration and arrival.'),
    every: quantity.optional().describe('Dosing interval for repeated doses.'),
    count: z.number().int().min(1).max(100000).optional().describe('Number of doses in the series (with every).'),
    until: quantity.optional().describe('Repeat while the administration time is at or before this time (with every).'),
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
export type DoseLine = z.output<typeof doseSchema>;
export type TransferLine = z.output<typeof transferSchema>;
export type SolverMethod = (typeof solverMethods)[number];
