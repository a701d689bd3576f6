/**
 * Plots of a fit to measured levels. The individual's predicted curve with its 90% band, the
 * typical curve dashed and the levels as points, is a FigureSpec for plot.ts's concentration
 * figure (linear and logarithmic panels). The goodness-of-fit plots are drawn here as vector
 * paths in the same style (ticks and labels from plot.ts's drawTickMarks, nice steps from
 * axis-ticks.ts): observed against predicted with the line of identity, and the weighted
 * residuals against time with the zero line. Levels below the limit are not drawn there (they
 * have no observed value); censored ones are listed in the levels table.
 */
import type { Model } from '../../models/building/model.ts';
import { linearAxis, timeAxis, type Axis } from '../../models/result/axis-ticks.ts';
import type { FitPrediction, FitResult } from '../../models/fitting/result.ts';
import type { SimulationResult } from '../../models/simulate.ts';
import { contentLeft, contentWidth, ensureSpace, font, palette, type } from './document.ts';
import { unitText } from './format.ts';
import { drawTickMarks, type FigureSpec, type Frame, type MeasuredPoint, type PlotBand, type PlotSeries } from './plot.ts';
import { doseMarks } from './regimen.ts';

/** Colour of the measured levels in every fit plot (the goodness-of-fit points too); curves take the other series colours. */
const levelColour = palette.series[1];
const curveColours = palette.series.filter((c) => c !== levelColour);

/** A light tint of a #rrggbb colour (share of the colour, the rest white), for a band under its line. */
export function tint(hex: string, share: number): string {
  const channel = (k: number) => Math.round(255 - share * (255 - parseInt(hex.slice(1 + 2 * k, 3 + 2 * k), 16)));
  return `#${[0, 1, 2].map((k) => channel(k).toString(16).padStart(2, '0')).join('')}`;
}

/**
 * The predicted curve of each observed compartment with its band (when it could be drawn),
 * the typical run's curve dashed (when given), and the levels: filled at the measured value,
 * hollow at the limit when below it.
 */
export function fitCurveSpec(r: FitResult, model: Model, typical: SimulationResult | null): FigureSpec {
  const series: PlotSeries[] = [];
  const bands: PlotBand[] = [];
  r.curves.forEach((c, k) => {
    const colour = curveColours[k % curveColours.length];
    const one = r.curves.length === 1;
    series.push({ label: one ? 'fitted (the estimates)' : `${c.compartment}: fitted`, times: c.times, values: c.predicted, color: colour });
    if (c.lower && c.upper) bands.push({ label: one ? '90% band from the parameter uncertainty' : `${c.compartment}: 90% band`, times: c.times, lower: c.lower, upper: c.upper, color: tint(colour, 0.3) });
    const t = typical?.compartments.find((s) => s.id === c.compartment)?.concentration;
    if (typical && t) series.push({ label: one ? 'typical values (dashed)' : `${c.compartment}: typical (dashed)`, times: typical.times, values: t, color: palette.muted, dashed: true });
  });
  const points: MeasuredPoint[] = r.predictions
    .map((p) => ({ time: p.time, value: (p.observed ?? p.limit) ?? NaN, hollow: p.observed === null, color: levelColour }))
    .filter((p) => Number.isFinite(p.value));
  const censored = r.predictions.some((p) => p.censored);
  const leftOut = r.predictions.some((p) => p.observed === null && !p.censored);
  const fate = censored && leftOut ? 'censored or left out as the table says' : censored ? 'counted as censored' : 'left out of the fit';
  return {
    series,
    bands,
    points,
    pointsLabel: points.some((p) => p.hollow) ? `measured level (hollow: below the limit, drawn at the limit; ${fate})` : 'measured level',
    window: null,
    doses: doseMarks(model),
    start: model.start,
    end: model.end,
    timeUnit: r.units.time,
    concentrationUnit: r.units.concentration,
  };
}

export const fitPlotHeight = 210;

interface Panel {
  title: string;
  xTitle: string;
  xAxis: Axis;
  yAxis: Axis;
  points: { x: number; y: number }[];
  /** Reference line from (x0, y0) to (x1, y1), in data coordinates. */
  line: [number, number, number, number];
}

function drawPanel(doc: PDFKit.PDFDocument, panel: Panel, x: number, y: number, width: number, height: number): void {
  const f: Frame = { left: x + 46, right: x + width - 8, top: y + 16, bottom: y + height - 30 };
  const { xAxis, yAxis } = panel;
  const xOf = (v: number) => f.left + ((v - xAxis.min) / (xAxis.max - xAxis.min)) * (f.right - f.left);
  const yOf = (v: number) => f.bottom - ((v - yAxis.min) / (yAxis.max - yAxis.min)) * (f.bottom - f.top);
  doc.font(font.bold).fontSize(type.small).fillColor(palette.text).text(panel.title, f.left, y + 2, { lineBreak: false });
  doc.save().lineWidth(0.35).strokeColor('#dde2e7');
  for (const t of yAxis.ticks) doc.moveTo(f.left, yOf(t.value)).lineTo(f.right, yOf(t.value)).stroke();
  for (const t of xAxis.ticks) doc.moveTo(xOf(t.value), f.top).lineTo(xOf(t.value), f.bottom).stroke();
  doc.restore();
  drawTickMarks(doc, f, xAxis, yAxis, xOf, yOf);
  doc.save();
  doc.rect(f.left, f.top, f.right - f.left, f.bottom - f.top).clip();
  const [x0, y0, x1, y1] = panel.line;
  doc.lineWidth(0.8).strokeColor(palette.muted).dash(3, { space: 2 }).moveTo(xOf(x0), yOf(y0)).lineTo(xOf(x1), yOf(y1)).stroke().undash();
  for (const p of panel.points) {
    doc.circle(xOf(p.x), yOf(p.y), 2.6).fillColor(levelColour).fillOpacity(0.85).fill();
    doc.circle(xOf(p.x), yOf(p.y), 2.6).lineWidth(0.5).strokeColor(palette.text).strokeOpacity(1).stroke();
  }
  doc.fillOpacity(1);
  doc.restore();
  doc.save().lineWidth(0.7).strokeColor(palette.text).rect(f.left, f.top, f.right - f.left, f.bottom - f.top).stroke().restore();
  doc.font(font.regular).fontSize(type.tiny).fillColor(palette.text);
  doc.text(panel.xTitle, (f.left + f.right) / 2 - doc.widthOfString(panel.xTitle) / 2, f.bottom + 15, { lineBreak: false });
}

/** The two panels side by side, kept on one page with their caption. */
export function drawFitPlots(doc: PDFKit.PDFDocument, predictions: readonly FitPrediction[], units: { time: string; concentration: string }, start: number, end: number, caption: string): void {
  const used = predictions.filter((p) => p.used && p.observed !== null && p.residual !== null);
  const c = unitText(units.concentration);
  let top = 0;
  for (const p of used) top = Math.max(top, p.observed as number, p.predicted);
  // The same axis on both sides, so the identity line is the diagonal.
  const square = linearAxis(0, top > 0 ? top * 1.05 : 1, 6);
  const residuals = used.map((p) => p.weightedResidual ?? 0);
  const reach = Math.max(1, ...residuals.map(Math.abs)) * 1.1;
  const residualAxis = linearAxis(-reach, reach, 6);
  const times = timeAxis(start, end, units.time);
  const xTitle = times.note?.startsWith('labels in days') ? `time (days) — ${times.note.replace('labels in days, ', '')}` : `time (${units.time})${times.note ? ` — ${times.note}` : ''}`;
  doc.font(font.italic).fontSize(type.small);
  const captionHeight = doc.heightOfString(caption, { width: contentWidth }) + 6;
  ensureSpace(doc, fitPlotHeight + captionHeight + 4);
  const y = doc.y;
  const half = contentWidth / 2;
  drawPanel(doc, { title: `Observed (up) against predicted (${c})`, xTitle: `predicted (${c})`, xAxis: square, yAxis: square, points: used.map((p) => ({ x: p.predicted, y: p.observed as number })), line: [square.min, square.min, square.max, square.max] }, contentLeft, y, half, fitPlotHeight);
  drawPanel(doc, { title: 'Weighted residual against time', xTitle, xAxis: times, yAxis: residualAxis, points: used.map((p, i) => ({ x: p.time, y: residuals[i] })), line: [times.min, 0, times.max, 0] }, contentLeft + half, y, half, fitPlotHeight);
  doc.y = y + fitPlotHeight + 4;
  doc.font(font.italic).fontSize(type.small).fillColor(palette.muted);
  doc.text(caption, contentLeft, doc.y, { width: contentWidth });
  doc.font(font.regular).fontSize(type.body).fillColor(palette.text);
  doc.x = contentLeft;
}
