/**
 * The points the plot draws for one curve, from the reported times: smooth at every zoom
 * and never more than the canvas can show.
 *
 * - Between two reported times wider than a few pixels, points are added on the monotone
 *   cubic Hermite interpolant (Fritsch & Carlson 1980, with the slopes of Fritsch & Butland
 *   1984 as in Moler's pchip), so a rising limb sampled every 15 min does not show its
 *   corners when zoomed to one interval. The interpolant is monotone wherever the data are
 *   and keeps between its two points, so it invents no peak, trough or negative value.
 *   It is taken piece by piece: a time reported twice (before and after a dose event) ends
 *   a piece, since the curve's slope (or value) jumps there.
 * - When more points fall in the visible span than four per pixel column, each column keeps
 *   its first, lowest, highest and last point at their own times (M4: Jugel et al., "M4: a
 *   visualization-oriented time series data aggregation", VLDB 2014), which draws the same
 *   pixels as the whole series.
 */

/** A point of the plot; `between` marks one added by the interpolant (no tooltip shows it). */
export interface CurvePoint {
  x: number;
  y: number;
  between?: true;
}

export interface CurveView {
  /** Visible x range (plot units). */
  min: number;
  max: number;
  /** Width of the plot area in CSS pixels. */
  pixels: number;
}

/** Pixels between added points on a wide gap; about the width of the line. */
const pixelsPerPoint = 3;
/** At most this many points added in one gap (a zoom far into one step). */
const maxPerGap = 64;

/** Slopes of the shape-preserving cubic through one piece (Fritsch–Butland interior, pchip ends). */
export function pchipSlopes(x: ArrayLike<number>, y: ArrayLike<number>, from: number, to: number, out: Float64Array): void {
  const n = to - from;
  if (n < 2) {
    if (n === 1) out[from] = 0;
    return;
  }
  const h = (k: number) => x[k + 1] - x[k];
  const d = (k: number) => (y[k + 1] - y[k]) / h(k);
  if (n === 2) {
    out[from] = out[from + 1] = d(from);
    return;
  }
  for (let k = from + 1; k < to - 1; k++) {
    const d0 = d(k - 1);
    const d1 = d(k);
    if (d0 * d1 <= 0) out[k] = 0;
    else {
      const w1 = 2 * h(k) + h(k - 1);
      const w2 = h(k) + 2 * h(k - 1);
      out[k] = (w1 + w2) / (w1 / d0 + w2 / d1);
    }
  }
  const end = (h0: number, h1: number, d0: number, d1: number): number => {
    let m = ((2 * h0 + h1) * d0 - h0 * d1) / (h0 + h1);
    if (Math.sign(m) !== Math.sign(d0)) m = 0;
    else if (Math.sign(d0) !== Math.sign(d1) && Math.abs(m) > Math.abs(3 * d0)) m = 3 * d0;
    return m;
  };
  out[from] = end(h(from), h(from + 1), d(from), d(from + 1));
  out[to - 1] = end(h(to - 2), h(to - 3), d(to - 2), d(to - 3));
}

/**
 * The curve to draw: reported points (values that cannot be drawn — null, not finite, or not
 * positive on a log axis — left out), with interpolated points in gaps wider than a few
 * pixels and M4 thinning past four points per pixel column. Points outside the view are
 * dropped except the one next to each edge, so the line runs to the frame.
 */
export function curvePoints(times: ArrayLike<number>, values: ArrayLike<number | null>, log: boolean, view: CurveView, tf = 1, cf = 1): CurvePoint[] {
  const xs: number[] = [];
  const ys: number[] = [];
  for (let i = 0; i < times.length; i++) {
    const v = values[i];
    if (v === null || !Number.isFinite(v) || (log && !(v > 0))) continue;
    xs.push(times[i] * tf);
    ys.push(v * cf);
  }
  const n = xs.length;
  // The visible index range, one point beyond each edge.
  let first = 0;
  while (first < n - 1 && xs[first + 1] < view.min) first++;
  let last = n - 1;
  while (last > first && xs[last - 1] > view.max) last--;
  const span = view.max - view.min;
  const perUnit = span > 0 && view.pixels > 0 ? view.pixels / span : 0;
  const slopes = new Float64Array(n);
  const out: CurvePoint[] = [];
  let start = first;
  while (start <= last) {
    // A piece ends before a repeated time (the two rows of a dose event).
    let end = start + 1;
    while (end <= last && xs[end] !== xs[end - 1]) end++;
    pchipSlopes(xs, ys, start, end, slopes);
    for (let k = start; k < end; k++) {
      out.push({ x: xs[k], y: ys[k] });
      if (k + 1 >= end) break;
      const h = xs[k + 1] - xs[k];
      const added = Math.min(maxPerGap, Math.ceil((h * perUnit) / pixelsPerPoint) - 1);
      for (let j = 1; j <= added; j++) {
        const s = j / (added + 1);
        const s2 = s * s;
        const s3 = s2 * s;
        const y = (2 * s3 - 3 * s2 + 1) * ys[k] + (s3 - 2 * s2 + s) * h * slopes[k] + (3 * s2 - 2 * s3) * ys[k + 1] + (s3 - s2) * h * slopes[k + 1];
        out.push({ x: xs[k] + s * h, y, between: true });
      }
    }
    start = end;
  }
  return out.length > 4 * view.pixels && view.pixels > 0 ? m4(out, view) : out;
}

/** First, lowest, highest and last point of each pixel column, in their order. */
export function m4(points: CurvePoint[], view: CurveView): CurvePoint[] {
  const out: CurvePoint[] = [];
  const scale = view.pixels / (view.max - view.min);
  let i = 0;
  while (i < points.length) {
    const column = Math.floor((points[i].x - view.min) * scale);
    let j = i;
    let lo = i;
    let hi = i;
    while (j + 1 < points.length && Math.floor((points[j + 1].x - view.min) * scale) === column) {
      j++;
      if (points[j].y < points[lo].y) lo = j;
      if (points[j].y > points[hi].y) hi = j;
    }
    const keep = [...new Set([i, lo, hi, j])].sort((a, b) => a - b);
    for (const k of keep) out.push(points[k]);
    i = j + 1;
  }
  return out;
}
