/**
 * Concentration–time plots drawn as PDF vector paths by the report itself: a linear and a
 * logarithmic panel with the target window shaded, dose times marked along the time axis,
 * nice ticks with units, a reference run overlaid dashed, and optional shaded bands (e.g. a
 * fit's 90% band). Long curves are thinned to
 * the first, lowest, highest and last point of each half-point column, which keeps every
 * peak and trough that can be seen at print resolution.
 */
import { contentLeft, contentWidth, ensureSpace, font, palette, type } from './document.ts';
import { linearAxis, logAxis, lowAfterRise, timeAxis, type Axis } from '../../models/result/axis-ticks.ts';
import { fmt, unitText } from './format.ts';

export interface PlotSeries {
  label: string;
  times: ArrayLike<number>;
  values: ArrayLike<number>;
  color: string;
  dashed?: boolean;
}

export interface TargetWindow {
  above: number | null;
  below: number | null;
  label: string;
}

export interface DoseMark {
  given: number;
  arrival: number;
  duration: number;
}

/** A measured level drawn over the curves: filled, or hollow at its limit when below the limit. */
export interface MeasuredPoint {
  time: number;
  value: number;
  hollow: boolean;
  color: string;
}

/** A shaded band between a lower and an upper curve on the same times, drawn under the curves. */
export interface PlotBand {
  label: string;
  times: ArrayLike<number>;
  lower: ArrayLike<number>;
  upper: ArrayLike<number>;
  color: string;
}

export interface FigureSpec {
  series: PlotSeries[];
  /** Shaded bands (optional), under the curves. */
  bands?: PlotBand[];
  /** Measured levels (optional: a figure without them is drawn as before). */
  points?: MeasuredPoint[];
  /** The legend's words for the measured levels, when the default ones do not fit the figure. */
  pointsLabel?: string;
  window: TargetWindow | null;
  doses: DoseMark[];
  start: number;
  end: number;
  timeUnit: string;
  concentrationUnit: string;
}

export interface Frame {
  left: number;
  right: number;
  top: number;
  bottom: number;
}

const columnWidth = 0.5;

/** Indices of the points to draw: per column, the first, lowest, highest and last point, in time order. */
export function thinned(times: ArrayLike<number>, values: ArrayLike<number>, t0: number, t1: number, columns: number): number[] {
  const n = times.length;
  let first = 0;
  while (first < n && times[first] < t0) first++;
  let last = n - 1;
  while (last >= 0 && times[last] > t1) last--;
  first = Math.max(0, first - 1);
  last = Math.min(n - 1, last + 1);
  if (last - first + 1 <= 4 * columns) {
    const all: number[] = [];
    for (let i = first; i <= last; i++) all.push(i);
    return all;
  }
  const out: number[] = [];
  const span = t1 - t0 || 1;
  let i = first;
  while (i <= last) {
    const column = Math.floor(((times[i] - t0) / span) * columns);
    let lo = i;
    let hi = i;
    let j = i;
    while (j + 1 <= last && Math.floor(((times[j + 1] - t0) / span) * columns) === column) {
      j++;
      if (values[j] < values[lo]) lo = j;
      if (values[j] > values[hi]) hi = j;
    }
    const keep = [...new Set([i, lo, hi, j])].sort((a, b) => a - b);
    out.push(...keep);
    i = j + 1;
  }
  return out;
}

function drawAxes(doc: PDFKit.PDFDocument, f: Frame, xAxis: Axis, yAxis: Axis, xOf: (t: number) => number, yOf: (c: number) => number): void {
  doc.save().lineWidth(0.35).strokeColor('#dde2e7');
  for (const t of yAxis.ticks) doc.moveTo(f.left, yOf(t.value)).lineTo(f.right, yOf(t.value)).stroke();
  for (const t of xAxis.ticks) doc.moveTo(xOf(t.value), f.top).lineTo(xOf(t.value), f.bottom).stroke();
  doc.restore();
  doc.save().lineWidth(0.3).strokeColor('#c6ccd3');
  for (const m of yAxis.minor) doc.moveTo(f.left, yOf(m)).lineTo(f.left + 3, yOf(m)).stroke();
  doc.restore();
  doc.save().lineWidth(0.7).strokeColor(palette.text).rect(f.left, f.top, f.right - f.left, f.bottom - f.top).stroke().restore();
  drawTickMarks(doc, f, xAxis, yAxis, xOf, yOf);
}

/** Tick marks and their labels on the left and bottom edges (shared with the population bands). */
export function drawTickMarks(doc: PDFKit.PDFDocument, f: Frame, xAxis: Axis, yAxis: Axis, xOf: (t: number) => number, yOf: (c: number) => number): void {
  doc.font(font.regular).fontSize(type.tiny).fillColor(palette.text);
  doc.save().lineWidth(0.6).strokeColor(palette.text);
  for (const t of yAxis.ticks) {
    const y = yOf(t.value);
    doc.moveTo(f.left - 3, y).lineTo(f.left, y).stroke();
    doc.text(t.label, f.left - 46, y - type.tiny * 0.6, { width: 41, align: 'right', lineBreak: false });
  }
  let lastRight = -Infinity;
  for (const t of xAxis.ticks) {
    const x = xOf(t.value);
    doc.moveTo(x, f.bottom).lineTo(x, f.bottom + 3).stroke();
    const w = doc.widthOfString(t.label);
    // Skip a label that would touch the one before it.
    if (x - w / 2 < lastRight + 4) continue;
    doc.text(t.label, x - w / 2, f.bottom + 5, { lineBreak: false });
    lastRight = x + w / 2;
  }
  doc.restore();
}

/**
 * The data range of the panels: the highest concentration, and the lowest one after each
 * curve first reaches a tenth of its own peak — so that the log scale spends its decades
 * on the shape of the curve, not on the first moments of the rise from zero.
 */
function range(spec: FigureSpec): { maxC: number; lowC: number } {
  let maxC = 0;
  let lowC = Infinity;
  for (const s of spec.series) {
    let peak = 0;
    for (let i = 0; i < s.values.length; i++) {
      if (s.times[i] >= spec.start && s.times[i] <= spec.end && s.values[i] > peak) peak = s.values[i];
    }
    maxC = Math.max(maxC, peak);
    const inSpan: number[] = [];
    for (let i = 0; i < s.values.length; i++) if (s.times[i] >= spec.start && s.times[i] <= spec.end) inSpan.push(s.values[i]);
    lowC = Math.min(lowC, lowAfterRise(inSpan, peak));
  }
  // A band's upper edge widens the range so the band is not cut off at the top.
  for (const b of spec.bands ?? []) {
    for (let i = 0; i < b.upper.length; i++) if (b.times[i] >= spec.start && b.times[i] <= spec.end && b.upper[i] > maxC) maxC = b.upper[i];
  }
  // Measured levels widen the range to show them; a level below the lowest decade is drawn on the floor.
  for (const p of spec.points ?? []) if (p.time >= spec.start && p.time <= spec.end && p.value > maxC) maxC = p.value;
  return { maxC, lowC };
}

function drawPanel(doc: PDFKit.PDFDocument, spec: FigureSpec, scale: 'linear' | 'log', x: number, y: number, width: number, height: number): void {
  const f: Frame = { left: x + 50, right: x + width - 10, top: y + 16, bottom: y + height - 30 };
  const { maxC: dataMax, lowC } = range(spec);
  let maxC = dataMax;
  const minPositive = lowC;
  const w = spec.window;
  // The window's edges count towards the range when they are near the data, so the band is visible.
  if (w?.above !== null && w?.above !== undefined && (maxC === 0 || w.above <= maxC * 3)) maxC = Math.max(maxC, w.above * 1.1);
  if (w?.below !== null && w?.below !== undefined && w.below <= maxC * 1.5) maxC = Math.max(maxC, w.below * 1.05);
  const xAxis = timeAxis(spec.start, spec.end, spec.timeUnit);
  const yAxis = scale === 'linear' ? linearAxis(0, maxC > 0 ? maxC : 1, 6) : logAxis(Number.isFinite(minPositive) ? minPositive : maxC / 1e4, maxC > 0 ? maxC : 1, 4);
  const xOf = (t: number) => f.left + ((t - xAxis.min) / (xAxis.max - xAxis.min)) * (f.right - f.left);
  const yOf =
    scale === 'linear'
      ? (c: number) => f.bottom - ((c - yAxis.min) / (yAxis.max - yAxis.min)) * (f.bottom - f.top)
      : (c: number) => f.bottom - ((Math.log10(c) - Math.log10(yAxis.min)) / (Math.log10(yAxis.max) - Math.log10(yAxis.min))) * (f.bottom - f.top);

  // Title: the scale and the quantity with its unit, above the plot area.
  doc.font(font.bold).fontSize(type.small).fillColor(palette.text);
  const title = `${scale === 'linear' ? 'Linear scale' : 'Logarithmic scale'} — concentration (${unitText(spec.concentrationUnit)})`;
  doc.text(title, f.left, y + 2, { lineBreak: false });

  // Target window band, under everything else.
  if (w) {
    const lowC = w.above ?? yAxis.min;
    const highC = w.below ?? yAxis.max;
    const top = Math.max(f.top, yOf(Math.min(highC, yAxis.max)));
    const bottom = Math.min(f.bottom, yOf(Math.max(lowC, yAxis.min)));
    if (bottom > top) {
      doc.save().rect(f.left, top, f.right - f.left, bottom - top).fillColor(palette.window).fill().restore();
      doc.save().lineWidth(0.5).strokeColor(palette.windowEdge).dash(1.5, { space: 1.5 });
      if (w.above !== null && yOf(w.above) >= f.top && yOf(w.above) <= f.bottom) doc.moveTo(f.left, yOf(w.above)).lineTo(f.right, yOf(w.above)).stroke();
      if (w.below !== null && yOf(w.below) >= f.top && yOf(w.below) <= f.bottom) doc.moveTo(f.left, yOf(w.below)).lineTo(f.right, yOf(w.below)).stroke();
      doc.undash().restore();
    }
  }
  drawAxes(doc, f, xAxis, yAxis, xOf, yOf);

  // Dose marks: a small triangle at each time a dose is given; infusions add a bar over their span.
  doc.save();
  const marks = spec.doses.filter((d) => d.given >= xAxis.min && d.given <= xAxis.max);
  const dense = marks.length > (f.right - f.left) / 4;
  for (const d of marks) {
    const mx = xOf(d.given);
    if (dense) doc.moveTo(mx, f.bottom).lineTo(mx, f.bottom - 3).lineWidth(0.3).strokeColor('#8f99a5').stroke();
    else doc.polygon([mx, f.bottom - 5], [mx - 2.6, f.bottom], [mx + 2.6, f.bottom]).fillColor(palette.muted).fill();
    if (d.duration > 0) {
      const x0 = xOf(d.arrival);
      const x1 = xOf(Math.min(d.arrival + d.duration, xAxis.max));
      doc.rect(x0, f.bottom - 7.5, Math.max(0.6, x1 - x0), 1.6).fillColor('#8f99a5').fill();
    }
  }
  doc.restore();

  // Curves, clipped to the plot area.
  doc.save();
  doc.rect(f.left, f.top, f.right - f.left, f.bottom - f.top).clip();
  const columns = Math.max(10, Math.round((f.right - f.left) / columnWidth));
  const floorY = f.bottom + 4;
  const yClamped = (c: number) => (scale === 'log' && !(c >= yAxis.min) ? floorY : Math.max(f.top - 4, Math.min(floorY, yOf(c))));
  for (const b of spec.bands ?? []) drawBand(doc, b, xAxis, columns, xOf, yClamped);
  for (const s of spec.series) {
    const idx = thinned(s.times, s.values, xAxis.min, xAxis.max, columns);
    let pen = false;
    for (const i of idx) {
      const c = s.values[i];
      if (!Number.isFinite(c) || (scale === 'log' && !(c > 0))) {
        pen = false;
        continue;
      }
      const py = scale === 'log' && c < yAxis.min ? floorY : Math.max(f.top - 4, Math.min(floorY, yOf(c)));
      const px = xOf(s.times[i]);
      if (pen) doc.lineTo(px, py);
      else doc.moveTo(px, py);
      pen = true;
    }
    doc.lineWidth(s.dashed ? 1 : 1.15).lineJoin('round').strokeColor(s.color);
    if (s.dashed) doc.dash(3.2, { space: 2.2 });
    doc.stroke();
    doc.undash();
  }
  drawPoints(doc, spec.points ?? [], scale, xOf, yOf, yAxis.min, f, floorY);
  doc.restore();

  doc.font(font.regular).fontSize(type.tiny).fillColor(palette.text);
  const xTitle = xAxis.note?.startsWith('labels in days') ? `time (days) — ${xAxis.note.replace('labels in days, ', '')}` : `time (${spec.timeUnit})${xAxis.note ? ` — ${xAxis.note}` : ''}`;
  doc.text(xTitle, (f.left + f.right) / 2 - doc.widthOfString(xTitle) / 2, f.bottom + 15, { lineBreak: false });
}

/** A band as one closed path: forward along the upper edge, back along the lower one (each thinned, extremes kept). */
function drawBand(doc: PDFKit.PDFDocument, b: PlotBand, xAxis: Axis, columns: number, xOf: (t: number) => number, yOf: (c: number) => number): void {
  const up = thinned(b.times, b.upper, xAxis.min, xAxis.max, columns).filter((i) => Number.isFinite(b.upper[i]));
  const down = thinned(b.times, b.lower, xAxis.min, xAxis.max, columns).filter((i) => Number.isFinite(b.lower[i])).reverse();
  if (up.length < 2 || down.length < 2) return;
  doc.save();
  doc.moveTo(xOf(b.times[up[0]]), yOf(b.upper[up[0]]));
  for (const i of up.slice(1)) doc.lineTo(xOf(b.times[i]), yOf(b.upper[i]));
  for (const i of down) doc.lineTo(xOf(b.times[i]), yOf(b.lower[i]));
  doc.closePath().fillColor(b.color).fill();
  doc.restore();
}

/** Measured levels as small circles over the curves; a level of 0 has no place on the logarithmic scale. */
function drawPoints(doc: PDFKit.PDFDocument, points: MeasuredPoint[], scale: 'linear' | 'log', xOf: (t: number) => number, yOf: (c: number) => number, yMin: number, f: Frame, floorY: number): void {
  for (const p of points) {
    if (!Number.isFinite(p.value) || (scale === 'log' && !(p.value > 0))) continue;
    const px = xOf(p.time);
    if (px < f.left - 1 || px > f.right + 1) continue;
    const py = scale === 'log' && p.value < yMin ? floorY : Math.max(f.top, Math.min(f.bottom, yOf(p.value)));
    doc.save().lineWidth(0.8).circle(px, py, 3.1);
    if (p.hollow) doc.fillAndStroke('#ffffff', p.color);
    else doc.fillAndStroke(p.color, '#ffffff');
    doc.restore();
  }
}

interface LegendItem {
  label: string;
  draw: (x: number, y: number) => void;
}

const legendRow = type.small * 1.6;

/** Legend entries flow in rows; returns each entry's position relative to the legend's corner. */
function legendLayout(doc: PDFKit.PDFDocument, items: LegendItem[], width: number): { x: number; y: number }[] {
  doc.font(font.regular).fontSize(type.small);
  let cx = 0;
  let cy = 0;
  return items.map((item) => {
    const w = 22 + doc.widthOfString(item.label) + 14;
    if (cx + w > width && cx > 0) {
      cx = 0;
      cy += legendRow;
    }
    const at = { x: cx, y: cy };
    cx += w;
    return at;
  });
}

function measureLegend(doc: PDFKit.PDFDocument, items: LegendItem[], width: number): number {
  const layout = legendLayout(doc, items, width);
  return layout.length === 0 ? 0 : layout[layout.length - 1].y + legendRow;
}

function drawLegend(doc: PDFKit.PDFDocument, items: LegendItem[], x: number, y: number, width: number): void {
  legendLayout(doc, items, width).forEach((at, i) => {
    items[i].draw(x + at.x, y + at.y + type.small * 0.55);
    doc.font(font.regular).fontSize(type.small).fillColor(palette.text);
    doc.text(items[i].label, x + at.x + 22, y + at.y, { lineBreak: false });
  });
}

/** Height of one panel (title, plot area, tick labels and axis title). */
export const panelHeight = 215;

/**
 * The concentration figure: legend, a linear panel and a logarithmic panel. Each panel is
 * kept whole; when the second must go to the next page the legend is repeated above it.
 */
export function drawConcentrationFigure(doc: PDFKit.PDFDocument, spec: FigureSpec, caption: string): void {
  const items: LegendItem[] = spec.series.map((s) => ({
    label: s.label,
    draw: (x, y) => {
      doc.save().lineWidth(s.dashed ? 1 : 1.4).strokeColor(s.color);
      if (s.dashed) doc.dash(3.2, { space: 2.2 });
      doc.moveTo(x, y).lineTo(x + 18, y).stroke().undash().restore();
    },
  }));
  for (const b of spec.bands ?? []) {
    items.push({
      label: b.label,
      draw: (x, y) => {
        doc.save().rect(x, y - 3.5, 18, 7).fillColor(b.color).fill().restore();
      },
    });
  }
  if (spec.points && spec.points.length > 0) {
    const color = spec.points[0].color;
    items.push({
      label: spec.pointsLabel ?? (spec.points.some((p) => p.hollow) ? 'measured level (hollow: below the limit, drawn at it)' : 'measured level'),
      draw: (x, y) => {
        doc.save().lineWidth(0.9).circle(x + 9, y, 3.1).fillAndStroke(color, '#ffffff').restore();
      },
    });
  }
  if (spec.window) {
    items.push({
      label: spec.window.label,
      draw: (x, y) => {
        doc.save().rect(x, y - 3.5, 18, 7).fillColor(palette.window).fill().restore();
      },
    });
  }
  if (spec.doses.length > 0) {
    items.push({
      label: spec.doses.some((d) => d.duration > 0) ? 'dose given (bar: infusion running)' : 'dose given',
      draw: (x, y) => {
        doc.save().polygon([x + 9, y - 3], [x + 6, y + 2.5], [x + 12, y + 2.5]).fillColor(palette.muted).fill().restore();
      },
    });
  }
  doc.font(font.italic).fontSize(type.small);
  const captionHeight = doc.heightOfString(caption, { width: contentWidth }) + 6;
  const legendHeight = measureLegend(doc, items, contentWidth - 60);
  // Drawing moves PDFKit's text cursor, so each block's top is kept and the cursor set below it.
  ensureSpace(doc, legendHeight + panelHeight + 4);
  let y = doc.y;
  drawLegend(doc, items, contentLeft + 50, y, contentWidth - 60);
  y += legendHeight + 2;
  drawPanel(doc, spec, 'linear', contentLeft, y, contentWidth, panelHeight);
  doc.y = y + panelHeight + 4;
  const before = doc.bufferedPageRange().count;
  ensureSpace(doc, panelHeight + captionHeight);
  y = doc.y;
  if (doc.bufferedPageRange().count !== before) {
    drawLegend(doc, items, contentLeft + 50, y, contentWidth - 60);
    y += legendHeight + 2;
  }
  drawPanel(doc, spec, 'log', contentLeft, y, contentWidth, panelHeight);
  doc.y = y + panelHeight + 4;
  doc.font(font.italic).fontSize(type.small).fillColor(palette.muted);
  doc.text(caption, contentLeft, doc.y, { width: contentWidth });
  doc.font(font.regular).fontSize(type.body).fillColor(palette.text);
  doc.x = contentLeft;
}

export function windowLabel(above: number | null, below: number | null, unit: string, compartment: string): string {
  const u = unitText(unit);
  const edges = above !== null && below !== null ? `${fmt(above)}–${fmt(below)} ${u}` : above !== null ? `above ${fmt(above)} ${u}` : `below ${fmt(below)} ${u}`;
  return `target window in ${compartment}: ${edges}`;
}
