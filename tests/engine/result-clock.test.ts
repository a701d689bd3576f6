/**
 * Clock times in the command line's CSV and text summary (resultToCsv, summaryText): when the
 * scenario has a clock, each elapsed time is shown with its clock time; without one the output
 * is as it was.
 */
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { resultToCsv, simulate } from '../../models/index.ts';
import type { SimulationResult } from '../../models/simulate.ts';
import { summaryText } from '../../models/result/summary-text.ts';

const sample = (name: string): Record<string, unknown> => JSON.parse(readFileSync(fileURLToPath(new URL(`../../samples/${name}`, import.meta.url)), 'utf8'));

function run(scenario: unknown): SimulationResult {
  const r = simulate(scenario);
  if (!r.ok) throw new Error(JSON.stringify(r.problems));
  return r.value;
}

const two = (n: number): string => String(n).padStart(2, '0');

/**
 * Independent of models/levels/clock.ts: JS Date arithmetic (ECMAScript Date, UTC fields) on
 * the origin written in the scenario. Elapsed minutes here are whole (15-minute output step).
 */
function expectedClock(originUtcMs: number, hours: number, offsetMinutes: number, offsetText: string): string {
  const d = new Date(originUtcMs + Math.round(hours * 60) * 60_000 + offsetMinutes * 60_000);
  return `${d.getUTCFullYear()}-${two(d.getUTCMonth() + 1)}-${two(d.getUTCDate())}T${two(d.getUTCHours())}:${two(d.getUTCMinutes())}${offsetText}`;
}

describe('clock times in the CSV', () => {
  it('the clock time column equals JS Date arithmetic on the origin, in hours (+01:00) and in minutes (-05:30); without a clock the header is as before', () => {
    const levels = sample('orvanix-levels.json');
    // orvanix-levels.json: origin 2026-03-04T08:00 at +01:00, i.e. 07:00 UTC.
    const cases = [
      { scenario: levels, origin: Date.UTC(2026, 2, 4, 7, 0), perHour: 1, offset: 60, text: '+01:00', unit: 'h' },
      {
        scenario: { ...levels, units: { amount: 'mg', volume: 'L', time: 'min' }, clock: { origin: '2026-03-04T08:00', zone: '-05:30' } },
        origin: Date.UTC(2026, 2, 4, 13, 30), // 08:00 at -05:30 is 13:30 UTC
        perHour: 60,
        offset: -330,
        text: '-05:30',
        unit: 'min',
      },
    ];
    for (const c of cases) {
      const lines = resultToCsv(run(c.scenario)).trimEnd().split('\n');
      expect(lines[0]).toBe(`time (${c.unit}),clock time,gut amount (mg),central amount (mg),central concentration (mg/L)`);
      expect(lines.length).toBeGreaterThan(100);
      for (const line of lines.slice(1)) {
        const [time, clock] = line.split(',');
        expect(clock).toBe(expectedClock(c.origin, Number(time) / c.perHour, c.offset, c.text));
      }
      // The output ends at the scenario's output.end, written as 2026-03-08T12:00 in the first case.
      if (c.perHour === 1) expect(lines.at(-1)!.split(',')[1]).toBe('2026-03-08T12:00+01:00');
    }

    // No clock: the exact header of before (as tests/engine/cli.test.ts has it), no date-time anywhere.
    const plain = resultToCsv(run(sample('brennock-oral-bid.json')));
    expect(plain.split('\n')[0]).toBe('time (h),gut amount (mg),central amount (mg),central concentration (mg/L)');
    expect(plain).not.toMatch(/\d{4}-\d{2}-\d{2}T/);
  });
});

describe('clock times in the text summary', () => {
  it('shows the clock time of an interval start, of Tmax, and of each measured level as the scenario wrote it', () => {
    const result = run(sample('orvanix-levels.json'));
    const text = summaryText(result);
    // Interval 2 starts 12 h after 2026-03-04T08:00+01:00 (the second twice-daily dose): 20:00 the same day.
    expect(text).toMatch(/^ {2}2 +12 +2026-03-04 20:00 \(\+01:00\) /m);
    expect(text).toContain('start (clock)');
    // Tmax's clock time: JS Date arithmetic on the origin (07:00 UTC), rounded to the second, shown at +01:00.
    const tmax = result.metrics.compartments.find((c) => c.compartment === 'central')!.overall.tmax;
    const at = new Date(Math.round((Date.UTC(2026, 2, 4, 7, 0) + tmax * 3_600_000) / 1000) * 1000 + 3_600_000);
    const seconds = at.getUTCSeconds() === 0 ? '' : `:${two(at.getUTCSeconds())}`;
    expect(text).toContain(`— ${at.getUTCFullYear()}-${two(at.getUTCMonth() + 1)}-${two(at.getUTCDate())} ${two(at.getUTCHours())}:${two(at.getUTCMinutes())}${seconds} (+01:00);`);
    // The level written "2026-03-04T19:50" (11.83 h after the origin), measured 3.5 mg/L, with the model and the residual.
    const level = result.observations[1];
    expect(text).toContain('Measured levels');
    expect(text).toMatch(new RegExp(`^ +11\\.83 +2026-03-04 19:50 \\(\\+01:00\\) +3\\.5 +${level.predicted.toPrecision(4)} +-?${Math.abs(level.residual!).toPrecision(4)}$`, 'm'));
    // The level below the limit shows as "< 0.5" with no residual.
    expect(text).toMatch(/^ +97 +2026-03-08 09:00 \(\+01:00\) +< 0\.5 +\S+ +—$/m);
    // Every line of the tables fits 80 columns.
    for (const line of text.split('\n').filter((l) => l.startsWith('  ') && !l.startsWith('  Window'))) expect(line.length).toBeLessThanOrEqual(80);
  });

  it("lists each subject's levels in a table of its own, so two patients never read as one series", () => {
    const scenario = sample('orvanix-levels.json') as { observations: { subject?: string }[] };
    scenario.observations = scenario.observations.map((o, i) => ({ ...o, subject: i % 2 === 0 ? 'P-017' : 'P-018' }));
    const text = summaryText(run(scenario));
    const a = text.indexOf('Measured levels of P-017');
    const b = text.indexOf('Measured levels of P-018');
    expect(a).toBeGreaterThan(0);
    expect(b).toBeGreaterThan(a);
    // P-017's table holds the levels written at even positions only: 3 of the 6.
    const first = text.slice(a, b).split('\n').filter((l) => /^ +\d/.test(l));
    expect(first).toHaveLength(3);
  });
});
