/**
 * Goodness-of-fit plots of a fit to measured levels, drawn as vector paths in the style of the
 * concentration plots (ticks and labels from plot.ts's drawTickMarks, nice steps from
 * axis-ticks.ts): observed against predicted with the line of identity, and the weighted
 * residuals against time with the zero line. Levels below the limit are not drawn (they have
 * no observed value); censored ones are listed in the levels table.
 */
import { linearAxis, timeAxis, type Axis } from '../../models/result/axis-ticks.ts';
import type { FitPrediction } from '../../models/fitting/result.ts';
import { contentLeft, contentWidth, ensureSpace, font, palette, type } from './document.ts';
import { unitText } from './format.ts';
import { drawTickMarks, type Frame } from './plot.ts';

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
    doc.circle(xOf(p.x), yOf(p.y), 2.6).fillColor(palette.series[1]).fillOpacity(0.85).fill();
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
