/**
 * The scenario summary printed above the plot (the form itself is not printed): title,
 * description, compartments, routes, dose lines and span of the run on screen, as the user
 * typed them, with the run's own count of reported times. Hidden on screen (styles.css).
 */
import type { SimulationResultJson } from '../../models/result/result-format.ts';
import { scenarioFingerprint } from '../../models/scenario/fingerprint.ts';
import { doseLineName } from '../../models/result/dose-words.ts';
import { h } from './dom.ts';

type Row = Record<string, unknown>;

function rows(value: unknown): Row[] {
  return Array.isArray(value) ? value.filter((r): r is Row => typeof r === 'object' && r !== null) : [];
}

function text(v: unknown): string {
  return typeof v === 'string' || typeof v === 'number' ? String(v) : '';
}

function route(t: Row): string {
  const kinetics = t.vmax !== undefined || t.km !== undefined ? `saturable, Vmax ${text(t.vmax)}, Km ${text(t.km)}` : t.cl !== undefined ? `CL ${text(t.cl)}` : `k ${text(t.k)}`;
  return `${text(t.from)} → ${t.to === undefined ? 'out of the body' : text(t.to)}: ${kinetics}${t.label ? ` (${text(t.label)})` : ''}`;
}

function doseLine(d: Row, i: number, labels: (string | null)[]): string {
  const parts = [`${text(d.amount)} into ${text(d.into)}`];
  if (d.at !== undefined) parts.push(`first at ${text(d.at)}`);
  if (d.duration !== undefined) parts.push(`over ${text(d.duration)}`);
  if (d.rate !== undefined) parts.push(`at ${text(d.rate)}`);
  if (d.every !== undefined) parts.push(`every ${text(d.every)}`);
  if (d.count !== undefined) parts.push(`${text(d.count)} doses`);
  if (d.through !== undefined) parts.push(`last at or before ${text(d.through)}`);
  if (d.bioavailability !== undefined) parts.push(`F ${text(d.bioavailability)}`);
  if (d.lag !== undefined) parts.push(`lag ${text(d.lag)}`);
  const name = doseLineName(i, labels);
  return `${name[0].toUpperCase()}${name.slice(1)}: ${parts.join(', ')}`;
}

export function renderPrintSummary(host: HTMLElement, scenario: unknown, result: SimulationResultJson | null): void {
  if (!result || typeof scenario !== 'object' || scenario === null) {
    host.replaceChildren(h('p', {}, 'No run to print. Run the simulation first.'));
    return;
  }
  const s = scenario as Row;
  const doses = rows(s.doses);
  const labels = doses.map((d) => (typeof d.label === 'string' && d.label ? d.label : null));
  const out = (s.output ?? {}) as Row;
  const comps = rows(s.compartments).map((c) => `${text(c.id)}${c.label ? ` (${text(c.label)})` : ''}: ${c.volume === undefined ? 'no volume (amount only)' : `volume ${text(c.volume)}`}`);
  const times = result.times;
  const parts = [
    h('h2', {}, text(s.title) || 'Scenario'),
    typeof s.description === 'string' && s.description ? h('p', {}, s.description) : null,
    h('p', {}, h('strong', {}, 'Compartments')),
    h('ul', {}, ...comps.map((c) => h('li', {}, c))),
    h('p', {}, h('strong', {}, 'Routes')),
    h('ul', {}, ...rows(s.transfers).map((t) => h('li', {}, route(t)))),
    h('p', {}, h('strong', {}, 'Dosing')),
    h('ul', {}, ...(doses.length ? doses.map((d, i) => h('li', {}, doseLine(d, i, labels))) : [h('li', {}, 'no doses')])),
    h(
      'p',
      {},
      `Span ${times[0] ?? 0}–${times[times.length - 1] ?? 0} ${result.units.time}${out.step !== undefined ? `, output step ${text(out.step)}` : ''}, ${times.length} reported times. Scenario fingerprint ${scenarioFingerprint(scenario)}. Figures below are of this run.`,
    ),
  ];
  host.replaceChildren(...parts.filter((x) => x !== null));
}
