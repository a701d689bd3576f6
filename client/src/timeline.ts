/**
 * The dosing timeline: one lane per dose line over the simulated span, a tick at every
 * administration (a bar for an infusion's length), drawn from the form as it changes.
 */
import { svg } from './dom.ts';
import { clockOf, type Clock } from '../../models/levels/clock.ts';
import { infusionLength, instantValue, timeValue, type UnitSet } from './quantity.ts';
import type { DoseDoc, ScenarioStore } from './store.ts';
import { fmt } from '../../models/result/summary-text.ts';

const right = 14;
const laneH = 24;
const top = 8;
const axisH = 26;
const maxMarks = 4000;

export const linePalette = ['#2f6f73', '#8a5a2b', '#5b5f97', '#9b4d63', '#4f7a3a', '#6b6b6b'];

export interface Administration {
  time: number;
  length: number | null;
}

/** Administration times of one dose line within [start, end], as the engine will expand them (capped for drawing). */
export function expandLine(d: DoseDoc, start: number, end: number, u: UnitSet, clock: Clock | null = null): { marks: Administration[]; truncated: boolean; readable: boolean } {
  const at = instantValue(d.at ?? 0, u, clock);
  if (at === null) return { marks: [], truncated: false, readable: false };
  const len = infusionLength(d.duration, d.rate, d.amount, u);
  const marks: Administration[] = [];
  const every = d.every === undefined ? null : timeValue(d.every, u);
  if (d.every !== undefined && (every === null || every <= 0)) return { marks: [], truncated: false, readable: false };
  if (every === null) {
    if (at <= end) marks.push({ time: at, length: len });
    return { marks, truncated: false, readable: true };
  }
  let last = end;
  if (typeof d.count === 'number') last = Math.min(end, at + (d.count - 1) * every);
  else if (d.through !== undefined) {
    const through = instantValue(d.through, u, clock);
    if (through === null) return { marks: [], truncated: false, readable: false };
    last = Math.min(end, through);
  }
  for (let k = 0; ; k++) {
    const t = at + k * every;
    if (t > last + 1e-9 * Math.max(1, Math.abs(last))) break;
    if (marks.length >= maxMarks) return { marks, truncated: true, readable: true };
    if (t >= start) marks.push({ time: t, length: len });
  }
  return { marks, truncated: false, readable: true };
}

/** Round tick spacing: multiples that people use for the time unit (hours by 6, 12, 24…). */
export function tickStep(span: number, unit: string, target = 8): number {
  const raw = span / target;
  const byUnit: Record<string, number[]> = {
    h: [0.25, 0.5, 1, 2, 3, 6, 12, 24, 48, 72, 168, 336, 720],
    min: [1, 2, 5, 10, 15, 30, 60, 120, 240, 360, 720, 1440],
    day: [1, 2, 7, 14, 28],
  };
  const list = byUnit[unit];
  if (list && raw <= list[list.length - 1]) return list.find((s) => s >= raw) ?? list[list.length - 1];
  const p = 10 ** Math.floor(Math.log10(raw || 1));
  const m = raw / p;
  return (m <= 1 ? 1 : m <= 2 ? 2 : m <= 5 ? 5 : 10) * p;
}

export function renderTimeline(store: ScenarioStore, host: HTMLElement): void {
  // Drawn at the width it is shown at, so its text keeps its size; narrow windows scroll it.
  const width = Math.max(340, Math.floor((host.clientWidth || 836) - 18));
  const labelW = width < 600 ? 92 : 150;
  const labelChars = Math.floor(labelW / 6.6);
  const u = store.units;
  // Date-times count from the scenario's clock, as the server reads them.
  const clock = clockOf(store.scenario.clock as { origin?: string; zone?: string } | undefined, (store.doses ?? []).map((d) => d.at)).clock;
  const start = instantValue(store.scenario.output?.start ?? 0, u, clock) ?? 0;
  const end = instantValue(store.scenario.output?.end, u, clock);
  const doses = store.doses;
  const root = svg('svg', { class: 'timeline-svg', width, role: 'img', 'aria-labelledby': 'timeline-title timeline-desc', 'data-testid': 'timeline' });
  const title = svg('title', { id: 'timeline-title' }, 'Dosing timeline');

  if (end === null || !(end > start)) {
    root.setAttribute('viewBox', `0 0 ${width} 40`);
    root.setAttribute('height', '40');
    root.append(title, svg('desc', { id: 'timeline-desc' }, 'No span to draw.'), svg('text', { x: width / 2, y: 24, 'text-anchor': 'middle', class: 'axis-label' }, 'Set an end time after the start to see the timeline.'));
    host.replaceChildren(root);
    return;
  }

  const plotW = width - labelW - right;
  const x = (t: number) => labelW + ((t - start) / (end - start)) * plotW;
  const lanes = Math.max(doses.length, 1);
  const height = top + lanes * laneH + axisH;
  root.setAttribute('viewBox', `0 0 ${width} ${height}`);
  root.setAttribute('height', String(height));
  root.append(title);

  const descParts: string[] = [];
  const lanesG = svg('g', {});
  doses.forEach((d, i) => {
    const y = top + i * laneH;
    const colour = linePalette[i % linePalette.length];
    const name = `${i + 1}${typeof d.label === 'string' && d.label ? ` · ${d.label}` : ''}`;
    lanesG.append(
      svg('rect', { x: labelW, y: y + 2, width: plotW, height: laneH - 4, class: i % 2 ? 'lane odd' : 'lane' }),
      svg('text', { x: labelW - 8, y: y + laneH / 2 + 4, 'text-anchor': 'end', class: 'lane-label' }, name.length > labelChars ? `${name.slice(0, labelChars - 1)}…` : name),
    );
    const { marks, truncated, readable } = expandLine(d, start, end, u, clock);
    if (!readable) {
      lanesG.append(svg('text', { x: labelW + 6, y: y + laneH / 2 + 4, class: 'lane-note' }, 'times not readable yet'));
      descParts.push(`line ${i + 1}: times not readable`);
      return;
    }
    const g = svg('g', { class: 'marks', fill: colour, stroke: colour });
    for (const m of marks) {
      const x0 = x(m.time);
      if (m.length !== null && m.length > 0) {
        const w = Math.max(2, x(Math.min(end, m.time + m.length)) - x0);
        g.append(svg('rect', { x: x0.toFixed(2), y: y + 6, width: w.toFixed(2), height: laneH - 12, class: 'infusion' }));
      } else {
        g.append(svg('line', { x1: x0.toFixed(2), x2: x0.toFixed(2), y1: y + 4, y2: y + laneH - 4, class: 'bolus' }));
      }
    }
    lanesG.append(g);
    if (truncated) lanesG.append(svg('text', { x: width - right, y: y + laneH / 2 + 4, 'text-anchor': 'end', class: 'lane-note' }, `first ${maxMarks} shown`));
    descParts.push(
      `line ${i + 1}${typeof d.label === 'string' && d.label ? ` (${d.label})` : ''}: ${marks.length}${truncated ? '+' : ''} dose${marks.length === 1 ? '' : 's'}` +
        (marks.length ? ` from ${fmt(marks[0].time)} to ${fmt(marks[marks.length - 1].time)} ${u.time}` : ''),
    );
  });
  if (doses.length === 0) lanesG.append(svg('text', { x: labelW + 6, y: top + laneH / 2 + 4, class: 'lane-note' }, 'No doses.'));

  // Time axis.
  const axisY = top + lanes * laneH + 4;
  const axis = svg('g', { class: 'axis' }, svg('line', { x1: labelW, x2: labelW + plotW, y1: axisY, y2: axisY }));
  const step = tickStep(end - start, u.time, width < 600 ? 5 : 8);
  const first = Math.ceil(start / step) * step;
  for (let t = first, n = 0; t <= end + 1e-9 && n < 60; t += step, n++) {
    const xt = x(t);
    axis.append(svg('line', { x1: xt, x2: xt, y1: axisY, y2: axisY + 4 }), svg('text', { x: xt, y: axisY + 16, 'text-anchor': 'middle', class: 'axis-label' }, fmt(t)));
  }
  axis.append(svg('text', { x: labelW - 8, y: axisY + 16, 'text-anchor': 'end', class: 'axis-label' }, `time (${u.time})`));
  root.append(svg('desc', { id: 'timeline-desc' }, `Span ${fmt(start)} to ${fmt(end)} ${u.time}. ${descParts.join('; ') || 'No doses.'}`), lanesG, axis);
  host.replaceChildren(root);
}
