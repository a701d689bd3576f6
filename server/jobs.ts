/** Messages between the HTTP thread and the simulation workers. */
export interface JobRequest {
  id: number;
  /**
   * 'simulate': the result as JSON; 'report': the printable report as PDF bytes; 'validate': a
   * summary or the problems; 'nca', 'fit', 'propose': the measured levels' figures, a fit to
   * them, regimen proposals, as JSON (server/levels-jobs.ts).
   */
  kind: 'simulate' | 'report' | 'validate' | 'nca' | 'fit' | 'propose';
  scenario: unknown;
  maxOutputPoints: number;
  /** Largest answer in bytes (simulate and validate; the report's PDF is not bounded by it); none when absent. */
  maxResponseBytes?: number;
  /** Report only: a reference scenario drawn dashed over the first. */
  reference?: unknown;
  /** Report only: the stored version it is issued for, printed in its title block. */
  stored?: StoredVersion;
  /** Fit only: overrides the scenario's fit.objective (?objective=). */
  objective?: 'wls' | 'map';
  /** NCA only: the area rule (?rule=); default linear up, log-linear down. */
  rule?: 'linear-up-log-down' | 'linear';
}

/** A scenario version in the store, as a report names it. */
export interface StoredVersion {
  name: string;
  id: number;
  version: number;
  /** Who asked for the report, as typed ('' when not given). */
  by: string;
}

export interface JobReply {
  id: number;
  status: number;
  contentType: string;
  /** Text (JSON), or the bytes of a binary answer such as a PDF (moved, not copied, between threads). */
  body: string | Uint8Array;
}
