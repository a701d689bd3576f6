/**
 * The model's parameters as a reviewer reads them: each compartment and transfer with its
 * units, and the quantities derived from them — rate constants k = CL/V, clearances CL = k·V,
 * the half-lives of the model's modes (from the eigenvalues of the rate matrix), the volume
 * at steady state where it applies, and Km/Vmax figures for saturable transfers.
 */
import type { Model } from '../../models/building/model.ts';
import type { SimulationResult } from '../../models/simulate.ts';
import { fmt, unitText, withUnit } from './format.ts';
import { adjustedPaths, subjectMark } from './subject.ts';

export type Role = 'central' | 'peripheral' | 'depot' | 'other';

export interface CompartmentRow {
  id: string;
  label: string;
  volume: string;
  role: Role;
}

export interface TransferRow {
  route: string;
  label: string;
  kinetics: string;
  /** k (1/time) for first-order transfers; for saturable ones the low-concentration rate Vmax/(Km·V). */
  rateConstant: string;
  /** CL = k·V for first-order transfers; for saturable ones the low-concentration clearance Vmax/Km. */
  clearance: string;
  note: string;
}

export interface DerivedRow {
  quantity: string;
  value: string;
  basis: string;
}

/** The volume at steady state, or why it is not stated. */
export type SteadyVolume =
  | { applies: true; value: number; sumOfVolumes: number | null; peripherals: number[] }
  | { applies: false; reason: string };

export interface ModelParameters {
  central: number | null;
  roles: Role[];
  compartments: CompartmentRow[];
  transfers: TransferRow[];
  derived: DerivedRow[];
  steadyVolume: SteadyVolume;
}

/** How the central compartment is chosen; printed in the report. */
export const centralRule =
  'Central compartment: the one with the first target window; else the one with a volume and the most elimination routes; else the first with a volume.';

/** How the volume at steady state is defined; printed in the report. */
export const steadyVolumeRule =
  'Vss = Vc · (1 + Σ kc→j / kj→c) over the peripheral compartments j (joined to the central one by first-order transfers both ways, and to nothing else): the amount in the body over the central concentration at steady state. Stated only for a mammillary model: drug leaves the body from the central compartment alone (or from a depot before absorption), and every other compartment is peripheral or a depot feeding the central one. Vss equals Vc + Σ Vj when each pair of transfers is an equal clearance (kc→j·Vc = kj→c·Vj).';

export function centralCompartment(model: Model): number | null {
  const firstWindow = model.thresholds[0];
  if (firstWindow && model.compartments[firstWindow.compartment].volume !== null) return firstWindow.compartment;
  let best: number | null = null;
  let bestRoutes = 0;
  model.compartments.forEach((c, i) => {
    if (c.volume === null) return;
    const routes = model.transfers.filter((t) => t.from === i && t.to === null).length;
    if (routes > bestRoutes) {
      best = i;
      bestRoutes = routes;
    }
  });
  if (best !== null) return best;
  const firstWithVolume = model.compartments.findIndex((c) => c.volume !== null);
  return firstWithVolume >= 0 ? firstWithVolume : null;
}

function rolesOf(model: Model, central: number | null): Role[] {
  return model.compartments.map((c, i) => {
    if (i === central) return 'central';
    if (central === null) return 'other';
    const out = model.transfers.filter((t) => t.from === i);
    const into = model.transfers.filter((t) => t.to === i);
    const firstOrder = [...out, ...into].every((t) => t.kinetics.kind === 'first-order');
    if (out.length > 0 && into.length > 0 && firstOrder && out.every((t) => t.to === central) && into.every((t) => t.from === central)) return 'peripheral';
    const feeds = out.some((t) => t.to === central) && out.every((t) => t.to === central || t.to === null);
    if (into.length === 0 && feeds && c.volume === null) return 'depot';
    return 'other';
  });
}

function firstOrderRate(model: Model, from: number, to: number | null): number {
  let k = 0;
  for (const t of model.transfers) if (t.from === from && t.to === to && t.kinetics.kind === 'first-order') k += t.kinetics.k;
  return k;
}

export function steadyVolume(model: Model, central: number | null, roles: Role[]): SteadyVolume {
  if (central === null) return { applies: false, reason: 'no compartment has a volume' };
  const vc = model.compartments[central].volume as number;
  const others = roles.map((r, i) => ({ r, i })).filter(({ r }) => r === 'other');
  if (others.length > 0) {
    const names = others.map(({ i }) => model.compartments[i].id).join(', ');
    return { applies: false, reason: `not a mammillary model: ${names} ${others.length > 1 ? 'are' : 'is'} neither a peripheral compartment of ${model.compartments[central].id} nor a depot feeding it` };
  }
  const peripherals = roles.flatMap((r, i) => (r === 'peripheral' ? [i] : []));
  let ratio = 0;
  let sum: number | null = vc;
  for (const j of peripherals) {
    ratio += firstOrderRate(model, central, j) / firstOrderRate(model, j, central);
    const vj = model.compartments[j].volume;
    sum = sum === null || vj === null ? null : sum + vj;
  }
  return { applies: true, value: vc * (1 + ratio), sumOfVolumes: sum, peripherals };
}

export function modelParameters(model: Model, result: SimulationResult): ModelParameters {
  const u = model.units;
  const conc = result.units.concentration;
  const k1 = result.units.rateConstant;
  const clUnit = `${u.volume}/${u.time}`;
  const central = centralCompartment(model);
  const roles = rolesOf(model, central);
  const name = (i: number | null) => (i === null ? 'out of the body' : model.compartments[i].id);
  // A value the subject's covariate relations changed carries a mark (the model holds the subject's value).
  const adjusted = adjustedPaths(model);
  const mark = (path: string) => (adjusted.has(path) ? ` ${subjectMark}` : '');

  const compartments: CompartmentRow[] = model.compartments.map((c, i) => ({
    id: c.id,
    label: c.label && c.label !== c.id ? c.label : '—',
    volume: c.volume === null ? 'amount only' : withUnit(c.volume, u.volume) + mark(`compartments[${i}].volume`),
    role: roles[i],
  }));

  // Model transfers are the scenario's, in order (a model is built only when every one is read).
  const transfers: TransferRow[] = model.transfers.map((t, i) => {
    const v = model.compartments[t.from].volume;
    const route = `${name(t.from)} → ${name(t.to)}`;
    const label = t.label ?? '—';
    if (t.kinetics.kind === 'first-order') {
      const { k, clearance } = t.kinetics;
      const cl = clearance ?? (v === null ? null : k * v);
      return {
        route,
        label,
        kinetics: (clearance !== null ? `first-order, CL ${withUnit(clearance, clUnit)}` : `first-order, k ${withUnit(k, k1)}`) + mark(`transfers[${i}].${clearance !== null ? 'cl' : 'k'}`),
        rateConstant: withUnit(k, k1),
        clearance: cl === null ? '—' : withUnit(cl, clUnit),
        note: clearance !== null ? 'k = CL / V' : cl === null ? 'no volume: amount-based' : 'CL = k · V',
      };
    }
    const { vmax, km } = t.kinetics;
    return {
      route,
      label,
      kinetics: `saturable, Vmax ${withUnit(vmax, `${u.amount}/${u.time}`)}${mark(`transfers[${i}].vmax`)}, Km ${withUnit(km, conc)}${mark(`transfers[${i}].km`)}`,
      rateConstant: v === null ? '—' : withUnit(vmax / (km * v), k1),
      clearance: withUnit(vmax / km, clUnit),
      note: `at C ≪ Km: k = Vmax/(Km·V), CL = Vmax/Km; at C = Km the rate is Vmax/2 = ${withUnit(vmax / 2, `${u.amount}/${u.time}`)}`,
    };
  });

  const derived: DerivedRow[] = [];
  const d = result.diagnostics.disposition;
  const basis = d.basis === 'exact' ? 'eigenvalue of the rate matrix' : 'eigenvalue of the rate matrix linearised at zero concentration';
  d.eigenvalues.forEach((e, i) => {
    const value = fmt(e.re) + (e.im ? ` ${e.im > 0 ? '+' : '−'} ${fmt(Math.abs(e.im))}i` : '');
    const hl = d.halfLives[i];
    derived.push({
      quantity: `λ${i + 1}, half-life t½ = ln 2 / |λ${i + 1}|`,
      value: `${value} ${unitText(k1)}; t½ ${hl === null ? '— (no way out)' : withUnit(hl, u.time)}`,
      basis,
    });
  });
  derived.push({
    quantity: 'Terminal half-life',
    value: d.terminalHalfLife === null ? '— (some drug never leaves the body)' : withUnit(d.terminalHalfLife, u.time),
    basis: `slowest mode${d.basis === 'exact' ? '' : '; at higher concentrations saturable routes are slower than this'}`,
  });

  if (central !== null) {
    const vc = model.compartments[central].volume as number;
    const clLinear = model.transfers
      .filter((t) => t.from === central && t.to === null && t.kinetics.kind === 'first-order')
      .reduce((s, t) => s + (t.kinetics.kind === 'first-order' ? t.kinetics.k * vc : 0), 0);
    const saturable = model.transfers.filter((t) => t.from === central && t.to === null && t.kinetics.kind === 'saturable');
    if (clLinear > 0 || saturable.length === 0) {
      derived.push({
        quantity: `First-order elimination from ${name(central)}`,
        value: `CL ${withUnit(clLinear, clUnit)}, k ${withUnit(clLinear / vc, k1)}`,
        basis: 'sum over first-order routes out of the body; k = CL / Vc',
      });
    }
    if (saturable.length > 0) {
      const low = saturable.reduce((s, t) => s + (t.kinetics.kind === 'saturable' ? t.kinetics.vmax / t.kinetics.km : 0), 0);
      derived.push({
        quantity: `Saturable elimination from ${name(central)}`,
        value: `CL at low concentration ${withUnit(low, clUnit)}`,
        basis: 'Σ Vmax/Km; falls as the concentration approaches and passes Km',
      });
    }
  }

  const sv = steadyVolume(model, central, roles);
  if (sv.applies) {
    derived.push({
      quantity: 'Volume at steady state Vss',
      value: withUnit(sv.value, u.volume),
      basis:
        sv.peripherals.length === 0
          ? 'one-compartment disposition: Vss = Vc'
          : `Vc · (1 + Σ kc→j/kj→c) over ${sv.peripherals.map((j) => model.compartments[j].id).join(', ')}${
              sv.sumOfVolumes !== null && Math.abs(sv.sumOfVolumes - sv.value) > 1e-9 * sv.value
                ? `; the sum of the entered volumes is ${withUnit(sv.sumOfVolumes, u.volume)} (transfers in and out are not equal clearances)`
                : '; equals the sum of the volumes'
            }`,
    });
  } else {
    derived.push({ quantity: 'Volume at steady state Vss', value: '— (not stated)', basis: sv.reason });
  }
  return { central, roles, compartments, transfers, derived, steadyVolume: sv };
}
