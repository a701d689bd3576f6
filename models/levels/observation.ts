/**
 * A measured level, normalised: plain numbers in the scenario's units. The scenario's
 * `observations` (or a CSV file read by the command line) become these; the NCA and the
 * overlay on the plots read only this form.
 */
export interface Observation {
  /** Elapsed time from the clock origin (or from time 0 without a clock), in the scenario's time unit (hours by default). */
  time: number;
  /** Id of a compartment that has a volume. */
  compartment: string;
  /** In the scenario's concentration unit (amount/volume, as the result's); null for a level below the limit given without a value. */
  concentration: number | null;
  subject: string | null;
  /** Reported as below the limit of quantification: the level is somewhere under `limit`. */
  belowLimit: boolean;
  /** The limit of quantification, in the scenario's concentration unit; null when not given. */
  limit: number | null;
  label: string | null;
  /** Where it was written, for messages: "observations[3]" or "levels.csv line 7". */
  path: string;
}

/** An observation beside the model's prediction at its time, for the overlay and the report's table. */
export interface ObservationFit extends Observation {
  /** The model's concentration at the observation's time (just before a dose given at that very time). */
  predicted: number;
  /** observed − predicted; null when the level has no value (below the limit, none given) or is below the limit. */
  residual: number | null;
}
