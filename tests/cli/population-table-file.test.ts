/**
 * A covariate table read from a CSV file: a cell the population refuses (a sex outside the
 * categories, a weight that is not positive) is named by the file's line and column, as the
 * CSV reader names what it cannot parse, never by the JSON path of rows the user never wrote.
 * Also the part file's words for a shard that holds no subjects.
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runCli } from '../../server/cli.ts';
import { shardSubjects } from '../../server/cli-commands.ts';

/** A fictional one-compartment infusion (invented numbers). */
const scenario = (population: Record<string, unknown>) => ({
  title: 'Fictional infusion, covariates from a file',
  units: { amount: 'mg', volume: 'L', time: 'h' },
  subject: { weight: '70 kg', height: '170 cm', age: '50 year', sex: 'female', serumCreatinine: '0.9 mg/dL' },
  compartments: [{ id: 'central', volume: { typical: '20 L', cv: '20%', name: 'V', covariates: [{ on: 'weight', power: 1, reference: '70 kg' }] } }],
  transfers: [{ from: 'central', cl: { typical: '5 L/h', cv: '30%', name: 'CL' } }],
  doses: [{ into: 'central', amount: '1000 mg', duration: '1 h', every: '12 h' }],
  output: { end: '1 day', step: '1 h' },
  population: { subjects: 6, seed: 11, targets: [{ trough: { atLeast: '8 mg/L' } }], ...population },
});

let dir: string;
const write = (file: string, text: string) => writeFileSync(join(dir, file), text);

beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), 'tidemark-table-file-'));
});

afterAll(() => {
  rmSync(dir, { recursive: true, force: true });
});

describe('cells of a covariate table file', () => {
  it('a bad sex and a weight below zero are named FILE line N, column NAME (a quoted field over two lines counted)', () => {
    // Line 1 header; row 0 spans lines 2–3 (a quoted ward name with a line break); row 1 line 4; row 2 line 5.
    write('people.csv', 'weight [kg],sex,ward\n60,female,"north\nwing"\n70,femme,south\n-5,male,east\n');
    write('pop.json', JSON.stringify(scenario({ covariateTable: { file: 'people.csv' } })));
    for (const command of ['population', 'validate']) {
      const out = runCli([command, 'pop.json'], { folder: dir });
      expect(out.code).toBe(1);
      expect(out.stderr).toBe("people.csv line 4, column sex: sex takes the categories 'female' and 'male', not 'femme'\npeople.csv line 5, column weight: must be positive\n");
    }
  });

  it('a column the population also draws is named once, on the header line', () => {
    write('drawn.csv', 'weight [kg],sex\n60,female\n70,male\n');
    write('drawn.json', JSON.stringify(scenario({ covariateTable: { file: 'drawn.csv' }, covariates: { sex: { distribution: 'categories', shares: { female: 1 } } } })));
    const out = runCli(['population', 'drawn.json'], { folder: dir });
    expect(out.code).toBe(1);
    expect(out.stderr).toBe("drawn.csv line 1, column sex: 'sex' is also drawn from population.covariates.sex; give it in one place\n");
  });

  it('rows given in the scenario itself keep their JSON paths', () => {
    write('rows.json', JSON.stringify(scenario({ covariateTable: { rows: [{ weight: '60 kg', sex: 'female' }, { weight: '70 kg', sex: 'femme' }] } })));
    const out = runCli(['population', 'rows.json'], { folder: dir });
    expect(out.code).toBe(1);
    expect(out.stderr).toContain("population.covariateTable.rows[1].sex: sex takes the categories 'female' and 'male', not 'femme'");
  });

  it('a good table file runs', () => {
    write('good.csv', 'weight [kg],sex\n60,female\n70,male\n');
    write('good.json', JSON.stringify(scenario({ covariateTable: { file: 'good.csv' } })));
    const out = runCli(['population', 'good.json'], { folder: dir });
    expect(out.stderr).toBe('');
    expect(out.code).toBe(0);
  });
});

describe('a shard part file', () => {
  it('a shard with no subjects says so rather than "subjects 0 to -1"', () => {
    // 2 subjects in 3 parts: part 1 holds ⌊2·1/3⌋ − ⌊0⌋ = 0 subjects (equal contiguous parts).
    write('two.json', JSON.stringify(scenario({ subjects: 2 })));
    const out = runCli(['population', 'two.json', '--shard', '1/3', '--out', 'part1.json'], { folder: dir });
    expect(out.code).toBe(0);
    expect(out.stderr).toBe(`wrote part 1 of 3 (no subjects) to ${join(dir, 'part1.json')}\n`);
    expect(shardSubjects({ first: 1, count: 1 })).toBe('subject 1');
    expect(shardSubjects({ first: 13, count: 13 })).toBe('subjects 13 to 25');
  });
});
