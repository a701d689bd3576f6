/**
 * Messages say what was measured and nothing else (issue 9 point 3): the dose rate against
 * each saturable way out's capacity, the per-cycle change with its sign, and no mention of
 * saturation where the model has none. Numbers in the messages are read back and checked
 * against the scenario's own numbers and the Michaelis–Menten rate law.
 */
import { describe, expect, it } from 'vitest';
import { run } from '../reference/helpers.ts';

/** The number before `suffix` in the message (e.g. '% of the saturable capacity'). */
function numberBefore(message: string, suffix: string): number {
  const m = new RegExp(`(-?[\\d.]+(?:e[+-]?\\d+)?)\\s*${suffix.replace(/[()]/g, '\\$&')}`).exec(message);
  if (!m) throw new Error(`'${suffix}' not found in: ${message}`);
  return Number(m[1]);
}

describe('no steady state within the cycle limit: drug piling up behind a saturable way out', () => {
  // 100 mg every 12 h into central (k 0.1 out, k 1 on to peripheral); the peripheral's only way out
  // carries at most Vmax = 5 mg/h.
  const result = run({
    title: 'Kestrin 100 mg every 12 h, saturable peripheral clearance',
    compartments: [{ id: 'central', volume: 10 }, { id: 'peripheral', volume: 20 }],
    transfers: [
      { from: 'central', to: 'peripheral', k: 1 },
      { from: 'central', k: 0.1 },
      { from: 'peripheral', vmax: 5, km: 1 },
    ],
    doses: [{ into: 'central', amount: 100, every: 12, count: 20 }],
    output: { end: 240, step: 1 },
  });
  const message = result.metrics.steadyState?.message ?? '';

  it('states the per-cycle change with the sign the rate law gives', () => {
    expect(result.metrics.steadyState?.reached).toBe(false);
    // Central is linear: per cycle it passes 100·k12/(k10 + k12) = 90.91 mg on and eliminates 9.09 mg; the
    // peripheral eliminates at most Vmax·τ = 60 mg (Michaelis–Menten rate law), so each cycle eliminates at most
    // 69.09 mg of the 100 mg dosed: it eliminates less than it doses, and the body gains (R&T ch. 20).
    expect(message).toMatch(/eliminated [\d.]+% less than it doses/);
    expect(message).toMatch(/amount in the body rose by/);
    const eliminated = numberBefore(message, 'of 100 mg');
    expect(eliminated).toBeLessThanOrEqual(100 / 11 + 60 + 1e-6);
    // The percentage is the measured shortfall; the rise is the same shortfall by mass balance (to
    // the cycle's integration error, 1e-6 of the dose here).
    expect(Math.abs(numberBefore(message, '% less') - (100 - eliminated))).toBeLessThanOrEqual(1e-3);
    expect(Math.abs(numberBefore(message, 'mg over that cycle') - (100 - eliminated))).toBeLessThanOrEqual(1e-3 * 100);
    // Piling up in the peripheral compartment: near saturation there each cycle eliminates about 69.09 mg.
    expect(Math.abs(eliminated - (100 / 11 + 60))).toBeLessThan(0.1);
  });

  it('states the dose rate against the capacity, as computed from the scenario', () => {
    // 100 mg / 12 h = 8.33333 mg/h against Vmax 5 mg/h: 166.667%.
    expect(numberBefore(message, "% of the saturable capacity out of 'peripheral'")).toBeCloseTo((100 * (100 / 12)) / 5, 3);
    expect(message).not.toMatch(/close to/);
  });
});

describe('a hair below saturation (719.9999 mg every 12 h, Vmax·τ = 720 mg)', () => {
  it('says what it measured, with a dose rate that is not rounded up to the capacity', () => {
    const result = run({
      title: 'Kestrin 719.9999 mg IV every 12 h',
      compartments: [{ id: 'central', volume: 40 }],
      transfers: [{ from: 'central', vmax: 60, km: 4 }],
      doses: [{ into: 'central', amount: 719.9999, every: 12, count: 20 }],
      output: { end: 240, step: 1 },
    });
    const ss = result.metrics.steadyState;
    expect(ss?.reached).toBe(false);
    const share = numberBefore(ss?.message ?? '', "% of the saturable capacity out of 'central'");
    // 719.9999/720 = 99.99998611…%: printed with the digits that tell it from 100%.
    expect(share).toBeLessThan(100);
    expect(Math.abs(share - (100 * 719.9999) / 720)).toBeLessThan(1e-6);
    expect(ss?.message).not.toMatch(/so close to/);
  });
});

describe('regimens far from any capacity', () => {
  it.each([0.2, 0.58])('at %s of Vmax: found, and the message speaks of no capacity', (fraction) => {
    // Kestrin: V = 40 L, Vmax = 60 mg/h, Km = 4 mg/L, boluses every 12 h.
    const dose = fraction * 60 * 12;
    const ss = run({
      title: `Kestrin ${dose} mg IV every 12 h`,
      compartments: [{ id: 'central', volume: 40 }],
      transfers: [{ from: 'central', vmax: 60, km: 4 }],
      doses: [{ into: 'central', amount: dose, every: 12, count: 20 }],
      output: { end: 240, step: 1 },
    }).metrics.steadyState;
    expect(ss?.reached, ss?.message).toBe(true);
    expect(ss?.message).not.toMatch(/capacity|saturable/);
  });
});
