// Clock times beside elapsed times in the report. The expected clock times are computed here
// independently of models/levels/clock.ts: JS Date arithmetic on UTC milliseconds (the instant
// = origin + elapsed time, shifted by the fixed offset and read with toISOString), checked against
// the IANA zone database through Intl.DateTimeFormat (Asia/Kolkata: +05:30 all year, no daylight
// saving since 1945). The report is read back with pdftotext, as the other report tests do.
import { afterAll, describe, expect, it } from 'vitest';
import { normaliseScenario } from '../../models/scenario/normalize.ts';
import { clockTimeAt, timeAndClock } from '../../server/report/clock-time.ts';
import { doseLineClock } from '../../server/report/regimen.ts';
import { buildReport } from '../../server/report/report.ts';
import { pdfPages, removeTempFiles } from './helpers.ts';

/** Fictional one-compartment bolus in minutes, the dose written as a ward clock time at +05:30, across a month's end. */
const scenario = {
  title: 'Fictional clock check: bolus every 8 h, time in minutes',
  units: { amount: 'mg', volume: 'L', time: 'min' },
  clock: { zone: '+05:30' },
  compartments: [{ id: 'central', volume: '20 L' }],
  transfers: [{ from: 'central', k: '0.004 1/min' }],
  doses: [{ into: 'central', amount: '100 mg', at: '2026-02-28T21:50', every: '8 h', count: 4 }],
  output: { end: '2026-03-01T23:00', step: '30 min' },
};

const offsetMinutes = 330;
// The first dose (the first-dose rule makes it the origin), written at +05:30.
const originMs = Date.UTC(2026, 1, 28, 21, 50) - offsetMinutes * 60_000;

/** Independent: "YYYY-MM-DD HH:MM[:SS] (+05:30)" of `minutes` after the origin, by Date arithmetic. */
function byDateArithmetic(minutes: number): string {
  const iso = new Date(originMs + minutes * 60_000 + offsetMinutes * 60_000).toISOString();
  const seconds = iso.slice(17, 19);
  return `${iso.slice(0, 10)} ${iso.slice(11, 16)}${seconds === '00' ? '' : `:${seconds}`} (+05:30)`;
}

/** Independent of the above: the wall clock in Asia/Kolkata from the zone database (sv-SE writes ISO-like dates). */
function byZoneDatabase(minutes: number): string {
  const text = new Intl.DateTimeFormat('sv-SE', { timeZone: 'Asia/Kolkata', year: 'numeric', month: '2-digit', day: '2-digit', hour: '2-digit', minute: '2-digit', second: '2-digit', hourCycle: 'h23' }).format(new Date(originMs + minutes * 60_000));
  return `${text.replace(/:00$/, '')} (+05:30)`;
}

function model() {
  const m = normaliseScenario(scenario);
  if (!m.ok) throw new Error(JSON.stringify(m.problems));
  return m.value;
}

afterAll(removeTempFiles);

describe('clock times of elapsed times (report tables)', () => {
  it('match Date arithmetic and the zone database, across the month end and with seconds', () => {
    const m = model();
    // 0: the origin; 130 min; 1570 min = next day 24:00 − 30 min; 1210.5 min has 30 s.
    for (const t of [0, 130, 1210.5, 1440, 1570]) {
      expect(byDateArithmetic(t)).toBe(byZoneDatabase(t));
      expect(clockTimeAt(t, m)).toBe(byDateArithmetic(t));
    }
    expect(clockTimeAt(130, m)).toBe('2026-03-01 00:00 (+05:30)');
    expect(timeAndClock(130, m)).toBe(`130\n${byDateArithmetic(130)}`);
  });

  it('leave the elapsed time alone without a clock', () => {
    const plain = normaliseScenario({ ...scenario, clock: undefined, doses: [{ ...scenario.doses[0], at: 0 }], output: { end: 1500, step: 30 } });
    if (!plain.ok) throw new Error(JSON.stringify(plain.problems));
    expect(clockTimeAt(130, plain.value)).toBeNull();
    expect(timeAndClock(130, plain.value)).toBe('130');
  });

  it('give a dose line its first and last dose in the span', () => {
    const m = model();
    // Doses at 0, 480, 960 and 1440 min (every 8 h), all before the end at 1510 min.
    expect(doseLineClock(m.doseLines[0], m)).toBe(`first ${byDateArithmetic(0)}\nlast ${byDateArithmetic(1440)}`);
  });
});

describe('report of a dose given as a date-time', () => {
  const outcome = buildReport({ scenario }, { now: new Date(Date.UTC(2031, 4, 17, 9, 30)) });
  if (!outcome.ok) throw new Error(JSON.stringify(outcome.problems));
  const flat = pdfPages(outcome.bytes).join('\n').replace(/\s+/g, ' ');

  it('shows the clock times of the doses beside the elapsed times', () => {
    expect(flat).toContain('Clock time of the doses');
    expect(flat).toContain(`first ${byDateArithmetic(0)}`);
    expect(flat).toContain(`last ${byDateArithmetic(1440)}`);
    // The per-interval table: the second interval starts at the second dose, 480 min.
    expect(flat).toContain('Start and clock time');
    expect(flat).toContain(byDateArithmetic(480));
  });
});
