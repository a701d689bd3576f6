/**
 * The order of population proposals. The share of subjects meeting every target decides, but two
 * shares from N subjects are only known to about two Monte Carlo standard errors, so regimens
 * whose shares lie that close are tied and ordered by the typical ranking's later keys (rank.ts).
 *
 * Tiers, so that the order is total and repeatable (a pairwise "within 2 SE" is not transitive):
 * the leader is the remaining regimen with the largest share (the typical keys break an exact
 * tie); its tier is every remaining regimen with p_leader − p ≤ 2·max(SE_leader, SE); the tier is
 * ordered by the typical keys; then the next leader among the rest.
 */
import { compareProposals } from './rank.ts';

export const POPULATION_RANKING_RULE =
  'the share of subjects meeting every target jointly, highest first; shares within 2 Monte Carlo standard errors of the best remaining one ' +
  '(p_best − p ≤ 2 × max(SE_best, SE)) are tied, and a tie is ordered as typical proposals are after their first key: ' +
  'the median steady-state trough closest to the middle of the trough window in log terms, then fewer doses per day, then a smaller daily amount, ' +
  'then a shorter infusion and a smaller dose';

/** Standard errors within which two shares count as tied. */
export const TIE_STANDARD_ERRORS = 2;

export interface PopulationRankable {
  amount: number;
  interval: number;
  duration: number;
  /** Share meeting every target and its binomial standard error. */
  probability: number;
  standardError: number;
  /** |ln(median trough / middle of the window)|; Infinity when there is none. */
  distance: number;
}

/** The typical ranking's keys after "targets met": every population row counts as meeting them. */
function typicalKeys(a: PopulationRankable, b: PopulationRankable, day: number): number {
  return compareProposals({ ...a, allMet: true, targetsMet: [] }, { ...b, allMet: true, targetsMet: [] }, day);
}

/**
 * The rows' indices in rank order, and each row's tier (1 for the leader's). `day` is 24 h in the
 * model's time unit (doses per day).
 */
export function rankPopulation(rows: readonly PopulationRankable[], day: number): { order: number[]; tier: number[] } {
  const remaining = rows.map((_, i) => i).sort((i, j) => rows[j].probability - rows[i].probability || typicalKeys(rows[i], rows[j], day));
  const order: number[] = [];
  const tier = new Array<number>(rows.length).fill(0);
  let t = 0;
  while (remaining.length > 0) {
    t++;
    const lead = rows[remaining[0]];
    const tied = remaining.filter((i) => lead.probability - rows[i].probability <= TIE_STANDARD_ERRORS * Math.max(lead.standardError, rows[i].standardError));
    tied.sort((i, j) => typicalKeys(rows[i], rows[j], day));
    for (const i of tied) {
      tier[i] = t;
      order.push(i);
      remaining.splice(remaining.indexOf(i), 1);
    }
  }
  return { order, tier };
}
