/**
 * Controls around the plot: which compartments to draw (and report), linear or log y,
 * and zoom to the whole span, one dosing interval, or the last interval with the steady-state cycle drawn over it.
 */
import type { SimulationResultJson } from '../../models/result/result-format.ts';
import { fmt } from '../../models/result/summary-text.ts';
import { byId, h } from './dom.ts';
import { colourOf } from './plot.ts';

export type Zoom = { mode: 'all' } | { mode: 'interval'; index: number } | { mode: 'steady' };

interface Interval {
  start: number;
  end: number;
}

/** Dosing intervals of a result (they are the same for every compartment). */
export function intervalsOf(result: SimulationResultJson): Interval[] {
  for (const figures of Object.values(result.metrics.compartments)) {
    if (figures.intervals.length > 0) return figures.intervals.map((iv) => ({ start: iv.start, end: iv.end }));
  }
  return [];
}

/** The interval shown as "steady state": the last whole dosing cycle of the maintenance regimen. */
export function steadyInterval(result: SimulationResultJson): number | null {
  const ivs = intervalsOf(result);
  if (ivs.length === 0) return null;
  const period = result.metrics.steadyState?.period;
  for (let i = ivs.length - 1; i >= 0; i--) {
    const len = ivs[i].end - ivs[i].start;
    if (period ? Math.abs(len - period) <= 1e-6 * period : len > 0) return i;
  }
  return ivs.length - 1;
}

export class PlotControls {
  selected = new Set<string>();
  log = false;
  zoom: Zoom = { mode: 'all' };
  private result: SimulationResultJson | null = null;
  private knownIds: string[] = [];

  private readonly boxes = byId('series-choices');
  private readonly intervalInput = byId<HTMLInputElement>('zoom-interval');
  private readonly intervalOf = byId('zoom-interval-of');
  private readonly zoomNote = byId('zoom-note');
  private readonly zoomButtons = {
    all: byId<HTMLButtonElement>('zoom-all'),
    steady: byId<HTMLButtonElement>('zoom-steady'),
    prev: byId<HTMLButtonElement>('zoom-prev'),
    next: byId<HTMLButtonElement>('zoom-next'),
  };

  constructor(private readonly onChange: (what: 'series' | 'scale' | 'zoom') => void) {
    for (const r of Array.from(document.querySelectorAll<HTMLInputElement>('input[name="y-scale"]'))) {
      r.addEventListener('change', () => {
        if (!r.checked) return;
        this.log = r.value === 'log';
        this.onChange('scale');
      });
    }
    this.zoomButtons.all.addEventListener('click', () => this.setZoom({ mode: 'all' }));
    this.zoomButtons.steady.addEventListener('click', () => this.setZoom({ mode: 'steady' }));
    this.zoomButtons.prev.addEventListener('click', () => this.step(-1));
    this.zoomButtons.next.addEventListener('click', () => this.step(1));
    this.intervalInput.addEventListener('change', () => {
      const n = Math.round(Number(this.intervalInput.value));
      if (Number.isFinite(n)) this.setZoom({ mode: 'interval', index: n - 1 });
    });
  }

  /** A new result: keep the chosen compartments that still exist; choose all when none do. */
  setResult(result: SimulationResultJson | null): void {
    this.result = result;
    const ids = result ? Object.entries(result.compartments).filter(([, s]) => s.concentration !== null).map(([id]) => id) : [];
    const fresh = ids.filter((id) => !this.knownIds.includes(id));
    this.knownIds = ids;
    const kept = [...this.selected].filter((id) => ids.includes(id));
    this.selected = new Set(kept.length ? [...kept, ...fresh] : ids);
    this.renderChoices();
    this.renderZoom();
  }

  /** Visible x range for the current zoom, or null for the whole span. */
  range(): { min: number; max: number } | null {
    const r = this.result;
    if (!r || this.zoom.mode === 'all') return null;
    const ivs = intervalsOf(r);
    const i = this.zoom.mode === 'steady' ? steadyInterval(r) : Math.max(0, Math.min(ivs.length - 1, this.zoom.index));
    if (i === null || !ivs[i] || !(ivs[i].end > ivs[i].start)) return null;
    return { min: ivs[i].start, max: ivs[i].end };
  }

  /** Where the steady-state cycle is drawn: the start of the last dosing interval, in the steady-state zoom only. */
  steadyFrom(): number | null {
    const r = this.result;
    if (!r || this.zoom.mode !== 'steady' || !r.metrics.steadyState?.profile) return null;
    return this.range()?.min ?? null;
  }

  private setZoom(z: Zoom): void {
    const ivs = this.result ? intervalsOf(this.result) : [];
    if (z.mode === 'interval') {
      if (ivs.length === 0) return;
      z = { mode: 'interval', index: Math.max(0, Math.min(ivs.length - 1, z.index)) };
    }
    this.zoom = z;
    this.renderZoom();
    this.onChange('zoom');
  }

  private step(by: number): void {
    const r = this.result;
    if (!r) return;
    const current = this.zoom.mode === 'interval' ? this.zoom.index : this.zoom.mode === 'steady' ? (steadyInterval(r) ?? 0) : by > 0 ? -1 : intervalsOf(r).length;
    this.setZoom({ mode: 'interval', index: current + by });
  }

  private renderChoices(): void {
    const r = this.result;
    this.boxes.replaceChildren();
    if (!r) return;
    for (const [id, s] of Object.entries(r.compartments)) {
      if (s.concentration === null) {
        this.boxes.append(h('span', { class: 'series-off' }, `${id}: amount only, no concentration`));
        continue;
      }
      const boxId = `series-${id}`;
      const box = h('input', { type: 'checkbox', id: boxId, value: id, checked: this.selected.has(id), 'data-focus-key': boxId });
      box.addEventListener('change', () => {
        if (box.checked) this.selected.add(id);
        else this.selected.delete(id);
        this.onChange('series');
      });
      const swatch = h('span', { class: 'swatch', 'aria-hidden': 'true' });
      swatch.style.backgroundColor = colourOf(r, id);
      this.boxes.append(h('span', { class: 'series-choice' }, box, h('label', { for: boxId }, swatch, s.label && s.label !== id ? `${id} (${s.label})` : id)));
    }
  }

  private renderZoom(): void {
    const r = this.result;
    const ivs = r ? intervalsOf(r) : [];
    const z = this.zoom;
    this.intervalInput.max = String(Math.max(1, ivs.length));
    this.intervalInput.disabled = ivs.length === 0;
    this.zoomButtons.prev.disabled = ivs.length === 0;
    this.zoomButtons.next.disabled = ivs.length === 0;
    this.zoomButtons.steady.disabled = ivs.length === 0;
    this.intervalOf.textContent = `of ${ivs.length}`;
    const active = z.mode === 'interval' ? Math.min(z.index, ivs.length - 1) : z.mode === 'steady' && r ? steadyInterval(r) : null;
    if (active !== null && active >= 0) this.intervalInput.value = String(active + 1);
    if (ivs.length === 0) this.intervalInput.value = '';
    else if (this.intervalInput.value === '') this.intervalInput.value = '1';
    else if (Number(this.intervalInput.value) > ivs.length) this.intervalInput.value = String(ivs.length);
    this.zoomButtons.all.setAttribute('aria-pressed', String(z.mode === 'all'));
    this.zoomButtons.steady.setAttribute('aria-pressed', String(z.mode === 'steady'));
    const range = this.range();
    const unit = r?.units.time ?? '';
    this.zoomNote.textContent =
      range === null
        ? r
          ? `Whole span, ${fmt(r.times[0])}–${fmt(r.times[r.times.length - 1])} ${unit}.`
          : ''
        : z.mode === 'steady'
          ? `Last dosing interval, ${fmt(range.min)}–${fmt(range.max)} ${unit}${r?.metrics.steadyState?.profile ? ', with the steady-state cycle (dashed): the regimen continued, computed, not simulated up to' : ''}.`
          : `Dosing interval ${(active ?? 0) + 1}: ${fmt(range.min)}–${fmt(range.max)} ${unit}.`;
  }
}
