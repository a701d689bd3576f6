// The plot's points (client/src/curve.ts), without a browser: smooth between reported times
// when zoomed in, faithful to the curve it interpolates, never across a dose event, and
// thinned to four points per pixel column without changing the column's extremes.
import { describe, expect, it } from 'vitest';
import { curvePoints, m4, type CurvePoint } from '../../client/src/curve.ts';

// One-compartment oral absorption with a lag (the Bateman function, e.g. Gibaldi & Perrier,
// Pharmacokinetics, 2nd ed., eq. 1.80), the shape of the brennock sample's first interval.
const ka = 0.9;
const k = 0.1;
const lag = 1 / 3;
const scale = (0.85 * 400 * ka) / (42 * (ka - k));
const bateman = (t: number) => (t <= lag ? 0 : scale * (Math.exp(-k * (t - lag)) - Math.exp(-ka * (t - lag))));

/** Reported times every 15 min to 12 h, with the lag's breakpoint reported twice (as the engine does). */
function sampled(): { times: number[]; values: number[] } {
  const times: number[] = [];
  for (let i = 0; i <= 48; i++) {
    const t = i * 0.25;
    if (t > lag && times[times.length - 1] < lag) times.push(lag, lag);
    times.push(t);
  }
  return { times, values: times.map(bateman) };
}

describe('curve points', () => {
  it('adds points on a shape-preserving cubic when one interval fills the plot, within 0.1% of Cmax of the true curve', () => {
    const { times, values } = sampled();
    const points = curvePoints(times, values, false, { min: 0, max: 12, pixels: 640 });
    const added = points.filter((p) => p.between);
    // 15 min is 13 px here: about four points per gap are added.
    expect(added.length).toBeGreaterThan(3 * 48);
    const cmax = Math.max(...values);
    let worst = 0;
    for (const p of added) worst = Math.max(worst, Math.abs(p.y - bateman(p.x)));
    // The straight line between the 15-min samples is off by up to 0.71% of Cmax on the rise
    // (measured: the corners a user sees when zoomed in); the monotone cubic by 0.054%, a
    // thirteenth of that — the bound below leaves room for the cubic's O(h³) error only.
    let chord = 0;
    for (let i = 0; i + 1 < times.length; i++) {
      if (times[i + 1] === times[i]) continue;
      const mid = (times[i] + times[i + 1]) / 2;
      chord = Math.max(chord, Math.abs((values[i] + values[i + 1]) / 2 - bateman(mid)));
    }
    expect(chord / cmax).toBeGreaterThan(0.005);
    expect(worst / cmax).toBeLessThan(0.001);
  });

  it('never leaves the range of the two reported values around it where the data rise or fall, and nothing is added before the lag', () => {
    const { times, values } = sampled();
    const points = curvePoints(times, values, false, { min: 0, max: 12, pixels: 640 });
    for (let i = 0; i < points.length; i++) {
      const p = points[i];
      if (!p.between) continue;
      let a = i - 1;
      while (points[a].between) a--;
      let b = i + 1;
      while (points[b].between) b++;
      expect(p.y).toBeGreaterThanOrEqual(Math.min(points[a].y, points[b].y) - 1e-12);
      expect(p.y).toBeLessThanOrEqual(Math.max(points[a].y, points[b].y) + 1e-12);
      if (p.x < lag) expect(p.y).toBe(0);
    }
  });

  it('adds nothing at the whole span, where reported times are under three pixels apart', () => {
    const times = Array.from({ length: 701 }, (_, i) => i * 0.24);
    const values = times.map((t) => bateman(t % 12));
    const points = curvePoints(times, values, false, { min: 0, max: 168, pixels: 640 });
    expect(points.filter((p) => p.between)).toHaveLength(0);
    expect(points).toHaveLength(701);
  });

  it('keeps both rows of a bolus and interpolates on each side of it separately', () => {
    // A bolus at t = 2: the value jumps from 1 to 6; a single cubic across would overshoot.
    const times = [0, 1, 2, 2, 3, 4];
    const values = [4, 2, 1, 6, 3, 1.5];
    const points = curvePoints(times, values, false, { min: 0, max: 4, pixels: 400 });
    const atJump = points.filter((p) => p.x === 2);
    expect(atJump.map((p) => p.y)).toEqual([1, 6]);
    const between = points.filter((p) => p.between);
    for (const p of between.filter((q) => q.x < 2)) expect(p.y).toBeLessThanOrEqual(4 + 1e-12);
    for (const p of between.filter((q) => q.x > 2)) expect(p.y).toBeLessThanOrEqual(6 + 1e-12);
    for (const p of between.filter((q) => q.x > 1 && q.x < 2)) expect(p.y).toBeLessThanOrEqual(2 + 1e-12);
  });

  it('leaves out what a log axis cannot show', () => {
    const points = curvePoints([0, 1, 2, 3], [0, 2, null, 1], true, { min: 0, max: 3, pixels: 10 });
    expect(points.filter((p) => !p.between).map((p) => p.y)).toEqual([2, 1]);
    for (const p of points) expect(p.y).toBeGreaterThan(0);
  });

  it("thins a long series to at most four points per pixel column with each column's extremes kept (M4)", () => {
    const n = 100_000;
    const series: CurvePoint[] = Array.from({ length: n }, (_, i) => ({ x: i / 1000, y: Math.sin(i / 37) + 0.3 * Math.sin(i / 3.1) }));
    const view = { min: 0, max: (n - 1) / 1000, pixels: 500 };
    const thin = m4(series, view);
    expect(thin.length).toBeLessThanOrEqual(4 * 501);
    const column = (p: CurvePoint) => Math.floor((p.x - view.min) * (view.pixels / (view.max - view.min)));
    const extremes = (list: CurvePoint[]) => {
      const m = new Map<number, [number, number]>();
      for (const p of list) {
        const c = column(p);
        const e = m.get(c) ?? [Infinity, -Infinity];
        m.set(c, [Math.min(e[0], p.y), Math.max(e[1], p.y)]);
      }
      return m;
    };
    expect(extremes(thin)).toEqual(extremes(series));
    // Points keep their own times and order.
    for (let i = 1; i < thin.length; i++) expect(thin[i].x).toBeGreaterThanOrEqual(thin[i - 1].x);
  });
});
