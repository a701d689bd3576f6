/**
 * Percentiles of a series of samples of the same subjects that change little from one sample to
 * the next — a population's concentrations, output time after output time. Each order statistic
 * is sought first among the subjects that were near its rank in the previous sample: the values
 * below the bracket their values now span are counted, those inside it kept and sorted, and when
 * the rank sought falls inside, it is read there. Only when it does not (the order of the subjects
 * changed more than the bracket allows) is the whole sample searched, by selection. Exact either
 * way: the same numbers as a sort and percentileOfSorted, definition 7 of Hyndman & Fan (1996).
 */
/** Subjects tracked on each side of a rank: the bracket of the next sample. */
const SIDE = 6;

export class TrackedPercentiles {
  /** Per percentile: the subjects near its ranks in the previous sample (count in `tracked`). */
  private readonly near: Int32Array[];
  private readonly tracked: Int32Array;
  private readonly keptValues: Float64Array;
  private readonly keptSubjects: Int32Array;
  private readonly work: Float64Array;
  private readonly workSubjects: Int32Array;
  /** Order statistics read from a bracket, and those that needed a selection (for the benchmark). */
  hits = 0;
  misses = 0;

  constructor(
    readonly n: number,
    /** The percentiles, ascending, each strictly between 0 and 100. */
    readonly ascending: readonly number[],
  ) {
    this.near = ascending.map(() => new Int32Array(2 * SIDE + 2));
    this.tracked = new Int32Array(ascending.length);
    this.keptValues = new Float64Array(Math.max(2, n));
    this.keptSubjects = new Int32Array(n);
    this.work = new Float64Array(n);
    this.workSubjects = new Int32Array(n);
  }

  /** The percentiles of values[0 … n−1] (not reordered; no NaN) into out, in the order of `ascending`. */
  next(values: Float64Array, out: Float64Array): void {
    const n = this.n;
    for (let p = 0; p < this.ascending.length; p++) {
      const h = ((n - 1) * this.ascending[p]) / 100;
      const lo = Math.floor(h);
      const hi = lo + 1 < n && h > lo ? lo + 1 : lo;
      const x = this.fromBracket(values, p, lo, hi) ? this.keptValues[0] : this.bySelection(values, p, lo, hi);
      const y = this.keptValues[1];
      out[p] = x === y ? x : x + (h - lo) * (y - x);
    }
  }

  /**
   * Ranks lo and hi from the bracket of the subjects tracked for percentile p: on success their
   * values are left in keptValues[0] and [1], the subjects near them tracked, and true returned.
   */
  private fromBracket(values: Float64Array, p: number, lo: number, hi: number): boolean {
    const count = this.tracked[p];
    if (count === 0) return false;
    const near = this.near[p];
    let a = Infinity;
    let b = -Infinity;
    for (let k = 0; k < count; k++) {
      const v = values[near[k]];
      if (v < a) a = v;
      if (v > b) b = v;
    }
    const kv = this.keptValues;
    const ks = this.keptSubjects;
    let below = 0;
    let kept = 0;
    for (let i = 0; i < this.n; i++) {
      const v = values[i];
      if (v < a) below++;
      else if (v <= b) {
        kv[kept] = v;
        ks[kept++] = i;
      }
    }
    if (lo < below || hi >= below + kept) {
      this.misses++;
      return false;
    }
    // A subject that moved far widens the bracket: order only the ranks needed, as below.
    const from = orderNear(kv, ks, kept, lo - below, hi - below);
    this.track(p, ks.subarray(from), lo - below - from, hi - below - from, kept - from);
    const x = kv[lo - below];
    const y = kv[hi - below];
    kv[0] = x;
    kv[1] = y;
    this.hits++;
    return true;
  }

  /** Ranks lo and hi of the whole sample by selection (Wirth's); returns rank lo's value and leaves rank hi's in keptValues[1]. */
  private bySelection(values: Float64Array, p: number, lo: number, hi: number): number {
    const n = this.n;
    const w = this.work;
    const ws = this.workSubjects;
    w.set(values.subarray(0, n));
    for (let i = 0; i < n; i++) ws[i] = i;
    const from = orderNear(w, ws, n, lo, hi);
    this.track(p, ws.subarray(from), lo - from, hi - from, n - from);
    this.keptValues[1] = w[hi];
    return w[lo];
  }

  /** Tracks the subjects at ranks lo − SIDE … hi + SIDE of a run of `length` subjects ordered there. */
  private track(p: number, subjects: Int32Array, lo: number, hi: number, length: number): void {
    const first = Math.max(0, lo - SIDE);
    const last = Math.min(length - 1, hi + SIDE);
    const near = this.near[p];
    for (let r = first; r <= last; r++) near[r - first] = subjects[r];
    this.tracked[p] = last - first + 1;
  }
}

/**
 * Puts ranks lo − SIDE … hi + SIDE of v[0 … length−1] in order, in place (s moved alongside), by
 * two selections and a sort of what lies between; returns the first of those ranks.
 */
function orderNear(v: Float64Array, s: Int32Array, length: number, lo: number, hi: number): number {
  const from = Math.max(0, lo - SIDE);
  const to = Math.min(length - 1, hi + SIDE);
  selectWithSubjects(v, s, 0, length, from);
  if (to > from) selectWithSubjects(v, s, from + 1, length, to);
  // Ranks from + 1 … to − 1 now lie between, unordered.
  sortWithSubjects(v, s, from + 1, to);
  return from;
}

/** Insertion sort of v[from … to−1] ascending, moving s alongside (short runs only). */
function sortWithSubjects(v: Float64Array, s: Int32Array, from: number, to: number): void {
  for (let i = from + 1; i < to; i++) {
    const x = v[i];
    const xs = s[i];
    let j = i - 1;
    while (j >= from && v[j] > x) {
      v[j + 1] = v[j];
      s[j + 1] = s[j];
      j--;
    }
    v[j + 1] = x;
    s[j + 1] = xs;
  }
}

/**
 * selectKth (Wirth's selection) over a[from … n−1] moving s alongside: afterwards a[k] is the
 * value a sort would put there, the smaller ones before it, the larger after.
 */
function selectWithSubjects(a: Float64Array, s: Int32Array, from: number, n: number, k: number): void {
  let l = from;
  let m = n - 1;
  while (l < m) {
    const x = a[k];
    let i = l;
    let j = m;
    do {
      while (a[i] < x) i++;
      while (x < a[j]) j--;
      if (i <= j) {
        const t = a[i];
        a[i] = a[j];
        a[j] = t;
        const u = s[i];
        s[i] = s[j];
        s[j] = u;
        i++;
        j--;
      }
    } while (i <= j);
    if (j < k) l = i;
    if (k < i) m = j;
  }
}
