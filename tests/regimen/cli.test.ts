/** The propose command (propose-cli.ts): the ranked table with its caution, JSON, --top, and errors with paths. */
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { proposeByBasis } from '../../models/regimen/propose-basis.ts';
import { populationProposalLimits, proposalsText, runProposeCli } from '../../server/propose-cli.ts';

const folder = fileURLToPath(new URL('../../samples/', import.meta.url));

describe('propose FILE', () => {
  it('prints the ranked table, the targets and the caution', () => {
    const o = runProposeCli(['orvanix-propose.json', '--top', '3'], { folder });
    expect(o.code).toBe(0);
    expect(o.stdout).toMatch(/rank\s+amount \(mg\)\s+interval \(h\)/);
    expect(o.stdout).toContain('✓ ✓');
    expect(o.stdout).toContain('(the best 3 of 48)');
    expect(o.stdout).toContain("Proposals are model outputs for a clinician's review, not recommendations");
  });
  it('gives the proposals as JSON', () => {
    const o = runProposeCli(['orvanix-propose.json', '--format', 'json', '--top', '2'], { folder });
    const r = JSON.parse(o.stdout) as { proposals: { rank: number; allMet: boolean }[]; searched: { regimens: number } };
    expect(r.proposals.map((p) => p.rank)).toEqual([1, 2]);
    expect(r.searched.regimens).toBe(48);
  });
  it('refuses a bad option and a missing file', () => {
    expect(runProposeCli(['orvanix-propose.json', '--format', 'csv'], { folder }).code).toBe(2);
    expect(runProposeCli(['no-such.json'], { folder }).stderr).toContain('no such file');
  });
  it('names a scenario without a propose block by its path', () => {
    const o = runProposeCli(['brennock-oral-bid.json'], { folder });
    expect(o.code).toBe(1);
    expect(o.stderr).toMatch(/^propose: the scenario has no `propose` block/m);
  });
});

describe('population proposals as text', () => {
  it('shows the note of a loading dose the strengths cannot give in the loading cell', () => {
    // orvanix-propose-population.json with a loading dose: 500 mg every 8 h asks for more than 3 × 500 mg.
    const scenario = JSON.parse(readFileSync(new URL('orvanix-propose-population.json', `file://${folder}`), 'utf8')) as { population: object; propose: object };
    const s = { ...scenario, population: { ...scenario.population, subjects: 10 }, propose: { ...scenario.propose, loading: true } };
    const r = proposeByBasis(s, populationProposalLimits);
    if (!r.ok) throw new Error(JSON.stringify(r.problems));
    const capped = r.value.proposals.filter((p) => p.loading?.note);
    expect(capped.length).toBeGreaterThan(0);
    expect(capped[0].loading?.note).toMatch(/^capped at 1500 mg: the strengths give no more; computed \d+ mg$/);
    const text = proposalsText(r.value, r.value.proposals.length);
    for (const p of capped) expect(text).toContain(`1500 mg (${p.loading?.note})`);
  });
});
