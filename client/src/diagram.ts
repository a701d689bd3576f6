/**
 * The compartment graph as inline SVG, redrawn from the scenario: compartments in columns
 * (dosed and feeding compartments first), transfers as labelled arrows, elimination
 * arrows crossing the dashed body outline and leaving the drawing.
 */
import { adjustedText, adjustmentAt } from './covariate-relations.ts';
import { svg } from './dom.ts';
import { quantityLabel, type Dim, type UnitSet } from './quantity.ts';
import type { ScenarioStore, TransferDoc } from './store.ts';

const nodeW = 150;
const nodeH = 58;
const colGap = 280;
const rowGap = 136;
const charW = 6.4; // rough width of a 12px label character, for sizing the drawing

interface Node {
  id: string;
  label: string;
  volume: string | null;
  x: number; // centre
  y: number;
  dosed: boolean;
}

/** The mark of a value the covariate relations made for this subject, explained by the legend. */
export const adjustedMark = '◆';

/**
 * A model quantity in a label: the last run's value for this subject with the mark when its
 * covariate relations changed it (path given), else as written — for { typical, … }, the typical value.
 */
function modelQuantityLabel(q: unknown, dim: Dim, u: UnitSet, path?: string): string {
  const related = typeof q === 'object' && q !== null && Array.isArray((q as { covariates?: unknown }).covariates);
  const adjusted = path === undefined || !related ? null : adjustmentAt(path);
  if (adjusted) return `${adjustedText(adjusted.value, dim, u)} ${adjustedMark}`;
  const plain = typeof q === 'object' && q !== null && 'typical' in q ? (q as { typical: unknown }).typical : q;
  return quantityLabel(plain, dim, u);
}

/** The kinetics of a transfer as a short label: "k 0.9 1/h", "CL 4.2 L/h", "Vmax 20 mg/h · Km 4 mg/L"; `path` (transfers[i]) marks values for this subject. */
export function kineticsLabel(t: TransferDoc, u: UnitSet, path?: string): string {
  const at = (key: string) => (path === undefined ? undefined : `${path}.${key}`);
  if (t.vmax !== undefined || t.km !== undefined) return `Vmax ${modelQuantityLabel(t.vmax, 'amountRate', u, at('vmax'))} · Km ${modelQuantityLabel(t.km, 'concentration', u, at('km'))}`;
  if (t.cl !== undefined) return `CL ${modelQuantityLabel(t.cl, 'clearance', u, at('cl'))}`;
  if (t.k !== undefined) return `k ${modelQuantityLabel(t.k, 'rateConstant', u, at('k'))}`;
  return 'kinetics not set';
}

function layout(store: ScenarioStore): Node[] {
  const seen = new Set<string>();
  const index = new Map(store.compartments.map((c, i) => [c, i]));
  const comps = store.compartments.filter((c) => {
    if (typeof c.id !== 'string' || c.id === '' || seen.has(c.id)) return false;
    seen.add(c.id);
    return true;
  });
  const ids = comps.map((c) => c.id as string);
  const internal = store.transfers.filter((t) => typeof t.from === 'string' && typeof t.to === 'string' && seen.has(t.from) && seen.has(t.to) && t.from !== t.to);
  const incoming = new Set(internal.map((t) => t.to as string));
  const dosed = new Set(store.doses.map((d) => d.into).filter((x): x is string => typeof x === 'string'));

  // Columns by breadth-first order from the compartments nothing flows into (else the dosed ones).
  let roots = ids.filter((id) => !incoming.has(id));
  if (roots.length === 0) roots = ids.filter((id) => dosed.has(id));
  if (roots.length === 0 && ids.length > 0) roots = [ids[0]];
  const column = new Map<string, number>();
  let frontier = roots;
  let col = 0;
  const assignFrom = (start: string[]) => {
    frontier = start.filter((id) => !column.has(id));
    for (const id of frontier) column.set(id, col);
    while (frontier.length > 0) {
      col++;
      const next: string[] = [];
      for (const id of frontier) {
        for (const t of internal) {
          if (t.from === id && !column.has(t.to as string)) {
            column.set(t.to as string, col);
            next.push(t.to as string);
          }
        }
      }
      frontier = next;
    }
  };
  assignFrom(roots);
  for (const id of ids) {
    if (!column.has(id)) {
      col = Math.max(0, ...column.values()) + 1;
      assignFrom([id]);
    }
  }
  // Rows within a column, each column centred on the tallest one (a hub sits between its peripherals).
  const count = new Map<number, number>();
  for (const id of ids) count.set(column.get(id) ?? 0, (count.get(column.get(id) ?? 0) ?? 0) + 1);
  const tallest = Math.max(1, ...count.values());
  const rowsInCol = new Map<number, number>();
  return comps.map((c) => {
    const id = c.id as string;
    const cx = column.get(id) ?? 0;
    const row = rowsInCol.get(cx) ?? 0;
    rowsInCol.set(cx, row + 1);
    const shift = ((tallest - (count.get(cx) ?? 1)) * rowGap) / 2;
    return {
      id,
      label: typeof c.label === 'string' ? c.label : '',
      volume: c.volume === undefined ? null : modelQuantityLabel(c.volume, 'volume', store.units, `compartments[${index.get(c)}].volume`),
      x: cx * colGap,
      y: row * rowGap + shift,
      dosed: dosed.has(id),
    };
  });
}

/** Where the segment from (sx, sy) inside a node's box towards (tx, ty) leaves the box. */
function clipToBox(n: Node, sx: number, sy: number, tx: number, ty: number, gap: number): [number, number] {
  const dx = tx - sx;
  const dy = ty - sy;
  const hw = nodeW / 2 + gap;
  const hh = nodeH / 2 + gap;
  // Largest step along (dx, dy) that stays within the box around the node's centre.
  let t = Infinity;
  if (dx !== 0) t = Math.min(t, ((dx > 0 ? n.x + hw : n.x - hw) - sx) / dx);
  if (dy !== 0) t = Math.min(t, ((dy > 0 ? n.y + hh : n.y - hh) - sy) / dy);
  if (!Number.isFinite(t)) return [sx, sy];
  return [sx + dx * t, sy + dy * t];
}

interface Box {
  x0: number;
  y0: number;
  x1: number;
  y1: number;
}

function grow(b: Box, x0: number, y0: number, x1: number, y1: number): void {
  b.x0 = Math.min(b.x0, x0);
  b.y0 = Math.min(b.y0, y0);
  b.x1 = Math.max(b.x1, x1);
  b.y1 = Math.max(b.y1, y1);
}

type Anchor = 'start' | 'middle' | 'end';

function labelBox(x: number, y: number, text: string, anchor: Anchor): Box {
  const w = text.length * charW;
  const x0 = anchor === 'start' ? x : anchor === 'end' ? x - w : x - w / 2;
  return { x0: x0 - 3, y0: y - 12, x1: x0 + w + 3, y1: y + 3 };
}

function textBox(b: Box, x: number, y: number, text: string, anchor: Anchor): void {
  const l = labelBox(x, y, text, anchor);
  grow(b, l.x0 - 1, l.y0 - 1, l.x1 + 1, l.y1 + 1);
}

function overlaps(a: Box, b: Box): boolean {
  return a.x0 < b.x1 && b.x0 < a.x1 && a.y0 < b.y1 && b.y0 < a.y1;
}

function label(x: number, y: number, text: string, anchor: 'start' | 'middle' | 'end', cls = 'edge-label'): SVGTextElement {
  return svg('text', { x: x.toFixed(1), y: y.toFixed(1), 'text-anchor': anchor, class: cls }, text);
}

export function renderDiagram(store: ScenarioStore, host: HTMLElement): void {
  const u = store.units;
  const nodes = layout(store);
  const byId = new Map(nodes.map((n) => [n.id, n]));
  const edgesLayer = svg('g', { class: 'edges' });
  const nodesLayer = svg('g', { class: 'nodes' });
  const labelsLayer = svg('g', { class: 'labels' });
  const box: Box = { x0: Infinity, y0: Infinity, x1: -Infinity, y1: -Infinity };
  const described: string[] = [];
  let skipped = 0;

  for (const n of nodes) grow(box, n.x - nodeW / 2, n.y - nodeH / 2, n.x + nodeW / 2, n.y + nodeH / 2);
  // Boxes labels must keep clear of: the compartments, then every label already placed.
  const taken: Box[] = nodes.map((n) => ({ x0: n.x - nodeW / 2, y0: n.y - nodeH / 2, x1: n.x + nodeW / 2, y1: n.y + nodeH / 2 }));

  // Transfers between compartments: edges of one pair are fanned so both directions show.
  const pairs = new Map<string, TransferDoc[]>();
  const eliminations = new Map<string, TransferDoc[]>();
  const transferPath = new Map(store.transfers.map((t, i) => [t, `transfers[${i}]`]));
  const kinetics = (t: TransferDoc) => kineticsLabel(t, u, transferPath.get(t));
  for (const t of store.transfers) {
    const from = typeof t.from === 'string' ? byId.get(t.from) : undefined;
    if (!from) {
      skipped++;
      continue;
    }
    if (t.to === undefined) {
      eliminations.set(from.id, [...(eliminations.get(from.id) ?? []), t]);
      continue;
    }
    const to = typeof t.to === 'string' ? byId.get(t.to) : undefined;
    if (!to || to === from) {
      skipped++;
      continue;
    }
    const key = [from.id, to.id].sort().join('\u0000');
    pairs.set(key, [...(pairs.get(key) ?? []), t]);
  }

  // Centre of the compartments: a pair's labels go on its side facing away from it, so no
  // label sits in the wedge between two pairs that share a compartment.
  const gx = nodes.reduce((acc, n) => acc + n.x, 0) / Math.max(1, nodes.length);
  const gy = nodes.reduce((acc, n) => acc + n.y, 0) / Math.max(1, nodes.length);
  for (const [key, list] of pairs) {
    const [aId, bId] = key.split('\u0000');
    const a = byId.get(aId) as Node;
    const b = byId.get(bId) as Node;
    const len = Math.hypot(b.x - a.x, b.y - a.y) || 1;
    const midX = (a.x + b.x) / 2;
    const midY = (a.y + b.y) / 2;
    // Unit normal of the pair, pointing away from the centre (up when the pair runs through it).
    let px = -(b.y - a.y) / len;
    let py = (b.x - a.x) / len;
    const away = (midX - gx) * px + (midY - gy) * py;
    if (away < -1 || (Math.abs(away) <= 1 && (py > 0 || (py === 0 && px > 0)))) (px = -px), (py = -py);
    const anchor: Anchor = Math.abs(px) > 0.7 ? (px > 0 ? 'start' : 'end') : 'middle';
    // The transfers between two compartments are parallel straight arrows.
    list.forEach((t, j) => {
      const from = byId.get(t.from as string) as Node;
      const to = byId.get(t.to as string) as Node;
      // Each arrow runs parallel to the line between the centres, shifted by its offset.
      const offset = list.length === 1 ? 0 : (j - (list.length - 1) / 2) * 10;
      const sx = from.x + px * offset;
      const sy = from.y + py * offset;
      const ex = to.x + px * offset;
      const ey = to.y + py * offset;
      const [ax, ay] = clipToBox(from, sx, sy, ex, ey, 3);
      const [bx, by] = clipToBox(to, ex, ey, sx, sy, 6);
      edgesLayer.append(
        svg('path', {
          d: `M${ax.toFixed(1)},${ay.toFixed(1)} L${bx.toFixed(1)},${by.toFixed(1)}`,
          class: `edge${t.vmax !== undefined || t.km !== undefined ? ' saturable' : ''}`,
          'marker-end': 'url(#tm-arrow)',
        }),
      );
    });
    // Labels stacked outside the pair; with two or more, each names its direction.
    const outermost = list.length === 1 ? 0 : ((list.length - 1) / 2) * 10;
    list.forEach((t, k) => {
      const from = byId.get(t.from as string) as Node;
      const to = byId.get(t.to as string) as Node;
      const dx = to.x - from.x;
      const dy = to.y - from.y;
      const glyph = Math.abs(dx) >= Math.abs(dy) ? (dx > 0 ? '→' : '←') : dy > 0 ? '↓' : '↑';
      const text = list.length > 1 ? `${glyph} ${kinetics(t)}` : kinetics(t);
      let spot: [number, number] | null = null;
      let first: [number, number] | null = null;
      for (let dist = outermost + 10 + k * 15, tries = 0; tries < 6 && !spot; dist += 15, tries++) {
        for (const along of [0, -0.18, 0.18]) {
          const cx = midX + (b.x - a.x) * along + px * dist;
          const cy = midY + (b.y - a.y) * along + py * dist + (py > 0.3 ? 10 : py > -0.3 ? 4 : 0);
          const cand: [number, number] = [cx, cy];
          first ??= cand;
          const lb = labelBox(cx, cy, text, anchor);
          if (!taken.some((o) => overlaps(o, lb))) {
            spot = cand;
            break;
          }
        }
      }
      const [lx, ly] = spot ?? (first as [number, number]);
      taken.push(labelBox(lx, ly, text, anchor));
      labelsLayer.append(label(lx, ly, text, anchor));
      textBox(box, lx, ly, text, anchor);
      described.push(`${from.id} to ${to.id}: ${kinetics(t)}`);
    });
  }

  // Elimination: arrows fan out downwards and cross the body outline.
  const bodyPad = 26;
  const bodyBottom = Math.max(...nodes.map((n) => n.y + nodeH / 2), 0) + bodyPad + 26;
  const exitY = bodyBottom + 46;
  for (const [id, list] of eliminations) {
    const n = byId.get(id) as Node;
    list.forEach((t, j) => {
      const spread = j - (list.length - 1) / 2;
      const x0 = n.x + spread * 34;
      const y0 = n.y + nodeH / 2 + 3;
      const x1 = n.x + spread * 80;
      edgesLayer.append(
        svg('path', {
          d: `M${x0.toFixed(1)},${y0.toFixed(1)} L${x1.toFixed(1)},${exitY}`,
          class: `edge elimination${t.vmax !== undefined || t.km !== undefined ? ' saturable' : ''}`,
          'marker-end': 'url(#tm-arrow-out)',
        }),
      );
      const text = kinetics(t);
      const anchor = spread < 0 ? 'end' : 'start';
      const lx = x1 + (spread < 0 ? -8 : 8);
      const ly = bodyBottom + 22;
      labelsLayer.append(label(lx, ly, text, anchor));
      textBox(box, lx, ly, text, anchor);
      described.push(`${id} out of the body: ${text}`);
    });
  }

  // Compartments, with a small dose arrow on those that receive doses.
  for (const n of nodes) {
    const g = svg('g', { class: `node${n.volume === null ? ' depot' : ''}` });
    g.append(
      svg('rect', { x: n.x - nodeW / 2, y: n.y - nodeH / 2, width: nodeW, height: nodeH, rx: n.volume === null ? 4 : 14 }),
      svg('text', { x: n.x, y: n.y - 8, 'text-anchor': 'middle', class: 'node-id' }, n.id),
      svg('text', { x: n.x, y: n.y + 8, 'text-anchor': 'middle', class: 'node-label' }, n.label.length > 22 ? `${n.label.slice(0, 21)}…` : n.label),
      svg('text', { x: n.x, y: n.y + 22, 'text-anchor': 'middle', class: 'node-volume' }, n.volume === null ? 'amount only' : `V ${n.volume}`),
    );
    nodesLayer.append(g);
    if (n.dosed) {
      const top = n.y - nodeH / 2;
      edgesLayer.append(svg('path', { d: `M${n.x - 50},${top - 26} L${n.x - 50},${top - 4}`, class: 'dose-in', 'marker-end': 'url(#tm-dose-arrow)' }));
      labelsLayer.append(label(n.x - 44, top - 16, 'dose', 'start', 'dose-label'));
      grow(box, n.x - 60, top - 30, n.x, top);
    }
  }

  const root = svg('svg', { class: 'diagram-svg', role: 'img', 'aria-labelledby': 'diagram-title diagram-desc', 'data-testid': 'diagram' });
  const title = svg('title', { id: 'diagram-title' }, 'Compartment diagram');
  const desc = svg(
    'desc',
    { id: 'diagram-desc' },
    nodes.length === 0
      ? 'No compartments.'
      : `Compartments: ${nodes.map((n) => n.id).join(', ')}. ${described.length ? `Transfers: ${described.join('; ')}.` : 'No transfers.'}`,
  );
  const defs = svg(
    'defs',
    {},
    svg('marker', { id: 'tm-arrow', viewBox: '0 0 10 10', refX: '9', refY: '5', markerWidth: '7', markerHeight: '7', orient: 'auto-start-reverse' }, svg('path', { d: 'M0,0 L10,5 L0,10 z', class: 'arrow-head' })),
    svg('marker', { id: 'tm-arrow-out', viewBox: '0 0 10 10', refX: '9', refY: '5', markerWidth: '7', markerHeight: '7', orient: 'auto-start-reverse' }, svg('path', { d: 'M0,0 L10,5 L0,10 z', class: 'arrow-head-out' })),
    svg('marker', { id: 'tm-dose-arrow', viewBox: '0 0 10 10', refX: '9', refY: '5', markerWidth: '6', markerHeight: '6', orient: 'auto-start-reverse' }, svg('path', { d: 'M0,0 L10,5 L0,10 z', class: 'dose-head' })),
  );

  if (nodes.length === 0) {
    root.setAttribute('viewBox', '0 0 400 60');
    root.append(title, desc, svg('text', { x: 200, y: 34, 'text-anchor': 'middle', class: 'node-label' }, 'Add a compartment to see the model.'));
    host.replaceChildren(root);
    return;
  }

  // The body outline: everything inside it is in the body; elimination arrows cross it.
  const bx0 = Math.min(...nodes.map((n) => n.x - nodeW / 2)) - bodyPad;
  const bx1 = Math.max(...nodes.map((n) => n.x + nodeW / 2)) + bodyPad;
  const by0 = Math.min(...nodes.map((n) => n.y - nodeH / 2)) - bodyPad - (nodes.some((n) => n.dosed) ? 18 : 0);
  const body = svg('rect', { x: bx0, y: by0, width: bx1 - bx0, height: bodyBottom - by0, rx: 18, class: 'body-outline' });
  const bodyText = svg('text', { x: bx1 - 10, y: by0 + 16, 'text-anchor': 'end', class: 'body-label' }, 'body');
  grow(box, bx0, by0, bx1, bodyBottom);
  if (eliminations.size > 0) grow(box, bx0, by0, bx1, exitY);

  const pad = 8;
  const vx = box.x0 - pad;
  const vy = box.y0 - pad;
  const vw = box.x1 - box.x0 + 2 * pad;
  // Elimination arrows end on the bottom edge: they leave the drawing.
  const vh = (eliminations.size > 0 ? exitY : box.y1 + pad) - vy;
  root.setAttribute('viewBox', `${vx.toFixed(0)} ${vy.toFixed(0)} ${vw.toFixed(0)} ${vh.toFixed(0)}`);
  root.setAttribute('width', vw.toFixed(0));
  root.setAttribute('height', vh.toFixed(0));
  // Shrinks to fit a wide column, but not below a legible size (the box scrolls instead).
  root.style.minWidth = `${Math.min(vw, 440).toFixed(0)}px`;
  root.append(title, desc, defs, body, bodyText, edgesLayer, nodesLayer, labelsLayer);
  host.replaceChildren(root);
  if (described.some((d) => d.includes(adjustedMark)) || nodes.some((n) => n.volume?.includes(adjustedMark))) {
    const legend = document.createElement('p');
    legend.className = 'note diagram-legend';
    legend.dataset.testid = 'diagram-legend';
    legend.textContent = `${adjustedMark} for this subject, from covariate relations (the last run's values).`;
    host.append(legend);
  }
  if (skipped > 0) {
    const note = document.createElement('p');
    note.className = 'note';
    note.textContent = `${skipped} transfer${skipped > 1 ? 's' : ''} not drawn: ${skipped > 1 ? 'they name' : 'it names'} a compartment that is not in the model (or itself).`;
    host.append(note);
  }
}
