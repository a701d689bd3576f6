/**
 * The scenario's `nca` section: a terminal line fixed by the user "from" an instant takes exactly
 * the levels at or after it that come after Cmax, and λz is then the least-squares slope of ln C
 * over those levels — checked against the normal equations of the straight line solved by mathjs
 * `lusolve` (an independent library) on the same points. Also: the most specific entry applies,
 * "automatic" undoes a wider one, a date-time reads by the scenario's clock, nca.rule gives the
 * area rule, too few levels are flagged (as --terminal-from does), and a wrong entry is refused
 * with its path.
 */
import { lusolve } from 'mathjs';
import { describe, expect, it } from 'vitest';
import { ncaOfModel, type ScenarioNca } from '../../models/levels/nca-scenario.ts';
import { buildModel, parseScenario } from '../../models/scenario/normalize.ts';
import type { Problem } from '../../models/scenario/problems.ts';

// An invented one-compartment oral drug (Bateman function, from memory of Gibaldi & Perrier, ch. 1),
// the levels scattered by a fixed ±4 % pattern so that no three points lie on one line.
const ka = 1.2;
const k = 0.08;
const level = (t: number, i: number) => 9 * (Math.exp(-k * t) - Math.exp(-ka * t)) * (1 + 0.04 * Math.sin(1.7 * i + 0.3));
const times = [0.5, 1, 2, 3, 4, 6, 8, 12, 24, 36, 48, 72];

function scenario(nca: unknown, extra: Record<string, unknown> = {}) {
  return {
    title: 'invented oral drug, two subjects',
    compartments: [{ id: 'gut' }, { id: 'central', volume: '30 L' }],
    transfers: [
      { from: 'gut', to: 'central', k: `${ka} 1/h` },
      { from: 'central', k: `${k} 1/h` },
    ],
    doses: [{ into: 'gut', amount: '300 mg' }],
    output: { end: '80 h', step: '1 h' },
    observations: ['A', 'B'].flatMap((subject, s) => times.map((t, i) => ({ time: t, compartment: 'central', concentration: level(t, i + 5 * s), subject }))),
    ...(nca === undefined ? {} : { nca }),
    ...extra,
  };
}

function nca(input: unknown, options: { rule?: 'linear' | 'linear-up-log-down' } = {}): { ok: true; value: ScenarioNca } | { ok: false; problems: Problem[] } {
  const parsed = parseScenario(input);
  if (!parsed.ok) return parsed;
  const model = buildModel(parsed.value);
  if (!model.ok) throw new Error(JSON.stringify(model.problems));
  return ncaOfModel(model.value, { ...options, ...(parsed.value.nca ? { section: parsed.value.nca } : {}) });
}

function ok(input: unknown, options: { rule?: 'linear' | 'linear-up-log-down' } = {}): ScenarioNca {
  const out = nca(input, options);
  if (!out.ok) throw new Error(JSON.stringify(out.problems));
  return out.value;
}

const paths = (input: unknown) => {
  const out = nca(input);
  if (out.ok) throw new Error('expected problems');
  return out.problems.map((p) => p.path);
};

/** −slope of ln C on t by the normal equations [n Σt; Σt Σt²][a; b] = [Σy; Σty], solved by mathjs lusolve. */
function lusolveRate(points: [number, number][]): number {
  const n = points.length;
  const st = points.reduce((a, [t]) => a + t, 0);
  const stt = points.reduce((a, [t]) => a + t * t, 0);
  const sy = points.reduce((a, [, c]) => a + Math.log(c), 0);
  const sty = points.reduce((a, [t, c]) => a + t * Math.log(c), 0);
  const solved = lusolve([[n, st], [st, stt]], [sy, sty]) as number[][];
  return -solved[1][0];
}

describe('a terminal line fixed in the scenario', () => {
  it('from "12 h" for subject A: exactly the levels at or after 12 h, λz their least-squares slope; B keeps the best adjusted R²', () => {
    const out = ok(scenario({ terminal: [{ subject: 'A', from: '12 h' }] }));
    const [a, b] = out.profiles;
    expect(a.result.terminal?.chosenBy).toBe('fixed');
    expect(a.terminalFixed).toEqual({ path: 'nca.terminal[0]', from: 12 });
    expect(a.result.terminal?.times).toEqual([12, 24, 36, 48, 72]);
    const rate = lusolveRate([12, 24, 36, 48, 72].map((t) => [t, level(t, times.indexOf(t))]));
    // Two routes to the same least-squares line in double precision: agreement to rounding of the normal equations (κ ≈ 1e4).
    expect(Math.abs((a.result.figures.terminalRate ?? 0) - rate) / rate).toBeLessThan(1e-10);
    // The automatic choice differs on these scattered levels, so the fixed line is not the same by chance.
    expect(b.result.terminal?.chosenBy).toBe('best adjusted R²');
    expect(b.terminalFixed).toBeNull();
    const automaticA = ok(scenario(undefined)).profiles[0];
    expect(automaticA.result.terminal?.times).not.toEqual([12, 24, 36, 48, 72]);
  });

  it('a date-time reads by the clock; a start at or before Cmax takes every level after Cmax; the most specific entry wins and "automatic" undoes a wider one', () => {
    const clocked = ok(scenario({ terminal: [{ from: '2026-03-04T20:00' }] }, { clock: { origin: '2026-03-04T08:00' } }));
    expect(clocked.profiles.map((p) => p.result.terminal?.times)).toEqual([[12, 24, 36, 48, 72], [12, 24, 36, 48, 72]]);
    const early = ok(scenario({ terminal: [{ from: 0 }] })).profiles[0];
    const tmax = early.result.figures.tmax ?? NaN;
    expect(early.result.terminal?.times).toEqual(times.filter((t) => t > tmax));
    const mixed = ok(scenario({ terminal: [{ from: '24 h' }, { subject: 'B', compartment: 'central', from: 'automatic' }, { compartment: 'central', from: '36 h' }] }));
    expect(mixed.profiles[0].result.terminal?.times).toEqual([36, 48, 72]);
    expect(mixed.profiles[0].terminalFixed?.path).toBe('nca.terminal[2]');
    expect(mixed.profiles[1].result.terminal?.chosenBy).toBe('best adjusted R²');
  });

  it('nca.rule gives the area rule unless the caller asks for one', () => {
    expect(ok(scenario({ rule: 'linear' })).rule).toBe('linear');
    expect(ok(scenario({ rule: 'linear' }), { rule: 'linear-up-log-down' }).rule).toBe('linear-up-log-down');
    expect(ok(scenario({})).rule).toBe('linear-up-log-down');
  });

  it('too few levels after the start are flagged at its path, as --terminal-from does, not refused', () => {
    const two = ok(scenario({ terminal: [{ subject: 'A', from: '40 h' }] })).profiles[0];
    expect(two.result.terminal?.times).toEqual([48, 72]);
    expect(two.result.flags.find((f) => f.figure === 'terminalRate')?.message).toMatch(/^nca\.terminal\[0\]\.from \(40 h\) leaves 2 levels \(at 48, 72 h\).*at least 3 are usual/);
    const none = ok(scenario({ terminal: [{ subject: 'A', from: '80 h' }] })).profiles[0];
    expect(none.result.terminal).toBeNull();
    expect(none.result.figures.terminalRate).toBeNull();
    expect(none.result.flags.find((f) => f.figure === 'terminalRate')?.message).toMatch(/leaves no level .* no terminal rate/);
  });

  it('a wrong entry is refused with its path', () => {
    expect(paths(scenario({ terminal: [{ subject: 'C', from: '12 h' }] }))).toEqual(['nca.terminal[0].subject']);
    expect(paths(scenario({ terminal: [{ compartment: 'gut', from: '12 h' }] }))).toEqual(['nca.terminal[0].compartment']);
    expect(paths(scenario({ terminal: [{ from: 'soon' }] }))).toEqual(['nca.terminal[0].from']);
    expect(paths(scenario({ terminal: [{ from: '2026-03-04T07:00' }] }, { clock: { origin: '2026-03-04T08:00' } }))).toEqual(['nca.terminal[0].from']);
    expect(paths(scenario({ terminal: [{ subject: 'A', from: 12 }, { subject: 'A', from: 24 }] }))).toEqual(['nca.terminal[1]']);
    expect(paths(scenario({ terminal: [{ from: 12, after: 3 }] }))).toEqual(['nca.terminal[0]']);
  });
});
