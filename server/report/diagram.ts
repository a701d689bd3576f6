/**
 * The compartment diagram, drawn as vector graphics: a box per compartment (name, label,
 * volume), an arrow per route with its parameters, elimination routes pointing down out of
 * the body. Depots stand to the left of the central compartment, peripheral compartments
 * (and any others) to the right; a pair of opposite routes is drawn as two parallel arrows.
 */
import type { Model, ModelTransfer } from '../../models/building/model.ts';
import { contentLeft, contentTop, contentWidth, contentBottom, ensureSpace, font, palette, type } from './document.ts';
import { fmt, unitText } from './format.ts';
import type { Role } from './parameters.ts';

interface Box {
  index: number;
  cx: number;
  cy: number;
  w: number;
  h: number;
}

interface Point {
  x: number;
  y: number;
}

const boxW = 104;
const boxH = 44;
const labelWidth = 92;

function transferText(t: ModelTransfer, model: Model): string[] {
  const u = model.units;
  const lines: string[] = [];
  if (t.label) lines.push(t.label.length > 48 ? `${t.label.slice(0, 47)}…` : t.label);
  if (t.kinetics.kind === 'first-order') {
    lines.push(t.kinetics.clearance !== null ? `CL ${fmt(t.kinetics.clearance)} ${unitText(`${u.volume}/${u.time}`)}` : `k ${fmt(t.kinetics.k)} 1/${u.time}`);
  } else {
    lines.push(`Vmax ${fmt(t.kinetics.vmax)} ${unitText(`${u.amount}/${u.time}`)}`, `Km ${fmt(t.kinetics.km)} ${unitText(`${u.amount}/${u.volume}`)}`);
  }
  return lines;
}

function fitText(doc: PDFKit.PDFDocument, text: string, width: number): string {
  if (doc.widthOfString(text) <= width) return text;
  let s = text;
  while (s.length > 1 && doc.widthOfString(`${s}…`) > width) s = s.slice(0, -1);
  return `${s}…`;
}

/** Where a ray from inside a box, along d, leaves it. */
function exitPoint(box: Box, from: Point, d: Point): Point {
  const hw = box.w / 2;
  const hh = box.h / 2;
  let t = Infinity;
  if (d.x !== 0) t = Math.min(t, ((d.x > 0 ? box.cx + hw : box.cx - hw) - from.x) / d.x);
  if (d.y !== 0) t = Math.min(t, ((d.y > 0 ? box.cy + hh : box.cy - hh) - from.y) / d.y);
  return { x: from.x + t * d.x, y: from.y + t * d.y };
}

function arrow(doc: PDFKit.PDFDocument, a: Point, b: Point, color: string, dashed = false): void {
  const dx = b.x - a.x;
  const dy = b.y - a.y;
  const len = Math.hypot(dx, dy) || 1;
  const ux = dx / len;
  const uy = dy / len;
  const head = 5.5;
  const tip = { x: b.x, y: b.y };
  const base = { x: b.x - ux * head, y: b.y - uy * head };
  doc.save().lineWidth(0.9).strokeColor(color);
  if (dashed) doc.dash(2.5, { space: 1.8 });
  doc.moveTo(a.x, a.y).lineTo(base.x, base.y).stroke();
  doc.undash();
  doc
    .polygon([tip.x, tip.y], [base.x - uy * 2.6, base.y + ux * 2.6], [base.x + uy * 2.6, base.y - ux * 2.6])
    .fillColor(color)
    .fill();
  doc.restore();
}

/** Word-wraps one line to a width (a word longer than the width is left to be shortened). */
function wrap(doc: PDFKit.PDFDocument, text: string, width: number): string[] {
  const out: string[] = [];
  let line = '';
  for (const word of text.split(' ')) {
    const candidate = line ? `${line} ${word}` : word;
    if (line && doc.widthOfString(candidate) > width) {
      out.push(line);
      line = word;
    } else line = candidate;
  }
  if (line) out.push(line);
  return out;
}

/** A label block whose near edge sits `offset` points from `anchor` in direction n. The first of several lines is the route's name. */
function label(doc: PDFKit.PDFDocument, given: string[], anchor: Point, n: Point, offset = 3, maxWidth = labelWidth): void {
  doc.fontSize(type.tiny);
  const named = given.length > 1;
  const lines: string[] = [];
  const faces: boolean[] = [];
  given.forEach((l, i) => {
    doc.font(named && i === 0 ? font.italic : font.regular);
    for (const part of wrap(doc, l, maxWidth)) {
      lines.push(part);
      faces.push(named && i === 0);
    }
  });
  const widths = lines.map((l, i) => {
    doc.font(faces[i] ? font.italic : font.regular);
    return Math.min(maxWidth, doc.widthOfString(l));
  });
  const w = Math.max(...widths) + 3;
  const lh = type.tiny * 1.22;
  const h = lines.length * lh + 1;
  const extent = Math.abs(n.x) * (w / 2) + Math.abs(n.y) * (h / 2);
  const cx = anchor.x + n.x * (offset + extent);
  const cy = anchor.y + n.y * (offset + extent);
  doc.save().rect(cx - w / 2, cy - h / 2, w, h).fillColor('#ffffff').fillOpacity(0.92).fill().restore();
  lines.forEach((l, i) => {
    doc.font(faces[i] ? font.italic : font.regular).fontSize(type.tiny).fillColor(faces[i] ? palette.muted : palette.text);
    const text = fitText(doc, l, maxWidth);
    doc.text(text, cx - doc.widthOfString(text) / 2, cy - h / 2 + 0.8 + i * lh, { lineBreak: false });
  });
}

export function drawDiagram(doc: PDFKit.PDFDocument, model: Model, roles: Role[], central: number | null): void {
  const left = roles.flatMap((r, i) => (r === 'depot' ? [i] : []));
  const right: number[] = [];
  // Peripheral (and other) compartments share the two sides, the right one first, so that
  // neither column grows much taller than the other. Without a central compartment all
  // compartments stand in the middle column.
  roles.forEach((r, i) => {
    if (central !== null && (r === 'peripheral' || r === 'other')) (right.length <= left.length ? right : left).push(i);
  });
  const middle = central === null ? model.compartments.map((_, i) => i).filter((i) => !left.includes(i) && !right.includes(i)) : [central];
  const eliminations = model.transfers.filter((t) => t.to === null);
  // Room under a box for an elimination arrow (22) and its label.
  doc.font(font.regular).fontSize(type.tiny);
  const perBox = (t: ModelTransfer) => (eliminations.filter((e) => e.from === t.from).length > 1 ? 54 : 120);
  const labelLines = Math.max(0, ...eliminations.map((t) => transferText(t, model).reduce((n, line) => n + wrap(doc, line, perBox(t)).length, 0)));
  const elimSpace = eliminations.length > 0 ? 28 + labelLines * type.tiny * 1.25 + 4 : 0;
  const below = (i: number) => (eliminations.some((t) => t.from === i) ? elimSpace : 0);
  const gapY = 22;

  // Box centres relative to the middle column's centre; each column's boxes are centred on it.
  const columnX = [contentLeft + boxW / 2 + 6, contentLeft + contentWidth * 0.46, contentLeft + contentWidth - boxW / 2 - 6];
  const relative: Box[] = [];
  [left, middle, right].forEach((list, column) => {
    const offsets: number[] = [];
    let y = 0;
    for (const i of list) {
      offsets.push(y + boxH / 2);
      y += boxH + below(i) + gapY;
    }
    const mean = offsets.reduce((a, b) => a + b, 0) / Math.max(1, offsets.length);
    list.forEach((index, k) => relative.push({ index, cx: columnX[column], cy: offsets[k] - mean, w: boxW, h: boxH }));
  });
  const minTop = Math.min(...relative.map((b) => b.cy - boxH / 2));
  const maxBottom = Math.max(...relative.map((b) => b.cy + boxH / 2 + below(b.index)));
  const height = maxBottom - minTop + 8;
  const available = contentBottom - contentTop - 20;
  const scale = height > available ? available / height : 1;
  ensureSpace(doc, height * scale + 6);
  const top = doc.y + 4;

  doc.save();
  if (scale < 1) {
    doc.translate(contentLeft, top).scale(scale).translate(-contentLeft, -top);
  }
  const boxes = new Map<number, Box>();
  for (const b of relative) boxes.set(b.index, { ...b, cy: b.cy - minTop + top });

  // Routes between compartments, grouped by ordered pair; a pair with routes both ways is drawn as two offset arrows.
  const groups = new Map<string, ModelTransfer[]>();
  for (const t of model.transfers) {
    if (t.to === null || t.to === t.from) continue;
    const key = `${t.from}>${t.to}`;
    groups.set(key, [...(groups.get(key) ?? []), t]);
  }
  for (const [key, list] of groups) {
    const [from, to] = key.split('>').map(Number);
    const a = boxes.get(from) as Box;
    const b = boxes.get(to) as Box;
    const both = groups.has(`${to}>${from}`);
    const lo = Math.min(from, to);
    const ref = lo === from ? { a, b } : { a: b, b: a };
    const len = Math.hypot(ref.b.cx - ref.a.cx, ref.b.cy - ref.a.cy) || 1;
    const d = { x: (ref.b.cx - ref.a.cx) / len, y: (ref.b.cy - ref.a.cy) / len };
    // Normal pointing "up" for a left-to-right pair, so the forward arrow sits above.
    let normal = { x: d.y, y: -d.x };
    if (normal.y > 0 || (normal.y === 0 && normal.x < 0)) normal = { x: -normal.x, y: -normal.y };
    const side = both ? (from === lo ? 1 : -1) : 0;
    const shift = 4 * side;
    const dir = from === lo ? d : { x: -d.x, y: -d.y };
    const startInside = { x: a.cx + normal.x * shift, y: a.cy + normal.y * shift };
    const endInside = { x: b.cx + normal.x * shift, y: b.cy + normal.y * shift };
    const start = exitPoint(a, startInside, dir);
    const end = exitPoint(b, endInside, { x: -dir.x, y: -dir.y });
    const saturable = list.some((t) => t.kinetics.kind === 'saturable');
    arrow(doc, start, end, saturable ? palette.caution : palette.text, saturable);
    // Labels sit where the arrows fan out: nearer the outer box when one end is the central one.
    const along = from === central ? 0.64 : to === central ? 0.36 : 0.5;
    const mid = { x: start.x + (end.x - start.x) * along, y: start.y + (end.y - start.y) * along };
    const labelSide = side === 0 ? normal : { x: normal.x * side, y: normal.y * side };
    label(doc, list.flatMap((t) => transferText(t, model)), mid, labelSide, 2.5);
  }

  // Elimination routes: arrows down out of the box, spread when a compartment has several.
  for (const [index, box] of boxes) {
    const routes = eliminations.filter((t) => t.from === index);
    routes.forEach((t, k) => {
      const spread = routes.length > 1 ? (k - (routes.length - 1) / 2) * 56 : 0;
      const x = box.cx + spread;
      const y0 = box.cy + box.h / 2;
      const saturable = t.kinetics.kind === 'saturable';
      arrow(doc, { x, y: y0 }, { x, y: y0 + 22 }, saturable ? palette.caution : palette.text, saturable);
      label(doc, transferText(t, model), { x, y: y0 + 22 }, { x: 0, y: 1 }, 1.5, perBox(t));
    });
  }

  // Boxes last, over the arrow ends.
  for (const [index, box] of boxes) {
    const c = model.compartments[index];
    const isCentral = index === central;
    const x = box.cx - box.w / 2;
    const y = box.cy - box.h / 2;
    doc.save().roundedRect(x, y, box.w, box.h, 4).fillColor(isCentral ? '#e8f0f7' : '#ffffff').fill().restore();
    doc.save().lineWidth(isCentral ? 1.4 : 0.9).strokeColor(isCentral ? palette.accent : palette.text);
    if (c.volume === null) doc.dash(3, { space: 2 });
    doc.roundedRect(x, y, box.w, box.h, 4).stroke().undash().restore();
    const lines: [string, string][] = [[font.bold, c.id]];
    if (c.label && c.label !== c.id) lines.push([font.regular, c.label]);
    lines.push([font.regular, c.volume === null ? 'amount only' : `V ${fmt(c.volume)} ${unitText(model.units.volume)}`]);
    const lh = type.small * 1.25;
    let ty = box.cy - (lines.length * lh) / 2 + 0.5;
    for (const [face, text] of lines) {
      doc.font(face).fontSize(type.small).fillColor(palette.text);
      const fitted = fitText(doc, text, box.w - 8);
      doc.text(fitted, box.cx - doc.widthOfString(fitted) / 2, ty, { lineBreak: false });
      ty += lh;
    }
  }
  doc.restore();
  doc.x = contentLeft;
  doc.y = top + height * scale + 2;
  doc.font(font.regular).fontSize(type.body).fillColor(palette.text);
}
