/**
 * Two small chart.js plugins: the target window filled as a band behind the curves, and
 * thin vertical lines at dose times (bolus arrivals and infusion starts).
 */
import type { Chart, Plugin } from 'chart.js';

export interface Band {
  /** Concentration edges; null for an open side. */
  lower: number | null;
  upper: number | null;
  fill: string;
  edge: string;
  text: string;
}

function clipToArea(chart: Chart, draw: (ctx: CanvasRenderingContext2D) => void): void {
  const { ctx, chartArea: a } = chart;
  ctx.save();
  ctx.beginPath();
  ctx.rect(a.left, a.top, a.right - a.left, a.bottom - a.top);
  ctx.clip();
  draw(ctx);
  ctx.restore();
}

/** Fills each band across the plot area, with its edges drawn as faint dashed lines. */
export function windowBandPlugin(getBands: () => Band[]): Plugin<'line'> {
  return {
    id: 'tmWindowBand',
    beforeDatasetsDraw(chart) {
      const y = chart.scales.y;
      const a = chart.chartArea;
      if (!y || !a) return;
      const bands = getBands();
      if (bands.length === 0) return;
      clipToArea(chart, (ctx) => {
        bands.forEach((b, i) => {
          const py = (v: number | null, open: number) => (v === null || !(v > 0 || y.type !== 'logarithmic') ? open : y.getPixelForValue(v));
          const top = Math.max(a.top, Math.min(a.bottom, py(b.upper, a.top)));
          const bottom = Math.max(a.top, Math.min(a.bottom, py(b.lower, a.bottom)));
          if (bottom > top) {
            ctx.fillStyle = b.fill;
            ctx.fillRect(a.left, top, a.right - a.left, bottom - top);
          }
          ctx.strokeStyle = b.edge;
          ctx.lineWidth = 1;
          ctx.setLineDash([4, 4]);
          for (const v of [b.lower, b.upper]) {
            if (v === null) continue;
            const p = py(v, NaN);
            if (!Number.isFinite(p) || p < a.top || p > a.bottom) continue;
            ctx.beginPath();
            ctx.moveTo(a.left, p);
            ctx.lineTo(a.right, p);
            ctx.stroke();
          }
          ctx.setLineDash([]);
          ctx.fillStyle = b.edge;
          ctx.font = '11px system-ui, sans-serif';
          ctx.textAlign = 'right';
          ctx.textBaseline = 'top';
          if (bottom > top + 12) ctx.fillText(b.text, a.right - 6, top + 3 + i * 13);
        });
      });
    },
  };
}

/** Thin vertical lines at the given times (only those inside the visible x range). */
export function doseMarksPlugin(getTimes: () => number[], colour: string): Plugin<'line'> {
  return {
    id: 'tmDoseMarks',
    beforeDatasetsDraw(chart) {
      const x = chart.scales.x;
      const a = chart.chartArea;
      if (!x || !a) return;
      const times = getTimes();
      if (times.length === 0) return;
      clipToArea(chart, (ctx) => {
        ctx.strokeStyle = colour;
        ctx.lineWidth = 1;
        ctx.beginPath();
        let lastPx = -Infinity;
        for (const t of times) {
          if (t < x.min || t > x.max) continue;
          const px = Math.round(x.getPixelForValue(t)) + 0.5;
          if (px - lastPx < 1) continue; // several doses on one pixel: one line
          lastPx = px;
          ctx.moveTo(px, a.top);
          ctx.lineTo(px, a.bottom);
        }
        ctx.stroke();
      });
    },
  };
}
