/**
 * Part files: one shard of a population (`population --shard I/N`), written so that `merge`
 * can later rebuild the plan and summarise every shard into the one result the whole run gives.
 *
 *   { "format": "tidemark-population-part", "version": 1,
 *     "scenario": the scenario as read (a covariate table file already read into rows),
 *     "overrides": { subjects, seed } (as resolved: the population's size and seed),
 *     "shard": { "index": I, "of": N }, "first", "count",
 *     "fingerprint": the scenario fingerprint of { scenario, overrides },
 *     "batch": the Batch, its typed arrays as base64 of little-endian bytes }
 */
import type { Batch, PopulationPlan } from '../models/population/population.ts';
import { shardRange } from '../models/population/population.ts';
import { scenarioFingerprint } from '../models/scenario/fingerprint.ts';

export const PART_FORMAT = 'tidemark-population-part';
export const PART_VERSION = 1;

export interface PopulationOverridesResolved {
  subjects: number;
  seed: number;
}

export interface PartFile {
  format: typeof PART_FORMAT;
  version: typeof PART_VERSION;
  scenario: unknown;
  overrides: PopulationOverridesResolved;
  shard: { index: number; of: number };
  first: number;
  count: number;
  fingerprint: string;
  batch: EncodedBatch;
}

export interface EncodedBatch {
  first: number;
  count: number;
  grid: string;
  figures: string;
  status: string;
  regimenFigures: string;
  regimenStatus: string;
  methods: string[];
  worstBalance: number | null;
  steadyMessage: string | null;
}

/** What two parts must share to be parts of one run. */
export function partFingerprint(scenario: unknown, overrides: PopulationOverridesResolved): string {
  return scenarioFingerprint({ scenario, overrides: { subjects: overrides.subjects, seed: overrides.seed } });
}

/** Float64 values as base64 of their IEEE 754 little-endian bytes, whatever the machine's byte order. */
export function float64ToBase64(values: Float64Array): string {
  const bytes = new Uint8Array(values.length * 8);
  const view = new DataView(bytes.buffer);
  for (let i = 0; i < values.length; i++) view.setFloat64(i * 8, values[i], true);
  return Buffer.from(bytes).toString('base64');
}

/** Single-precision arrays (the batch's concentration grid), little-endian IEEE 754. */
export function float32ToBase64(values: Float32Array): string {
  const bytes = new Uint8Array(values.length * 4);
  const view = new DataView(bytes.buffer);
  for (let i = 0; i < values.length; i++) view.setFloat32(i * 4, values[i], true);
  return Buffer.from(bytes).toString('base64');
}

export function base64ToFloat32(text: string): Float32Array | null {
  const bytes = Buffer.from(text, 'base64');
  if (bytes.length % 4 !== 0) return null;
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const out = new Float32Array(bytes.length / 4);
  for (let i = 0; i < out.length; i++) out[i] = view.getFloat32(i * 4, true);
  return out;
}

export function base64ToFloat64(text: string): Float64Array | null {
  const bytes = Buffer.from(text, 'base64');
  if (bytes.length % 8 !== 0) return null;
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const out = new Float64Array(bytes.length / 8);
  for (let i = 0; i < out.length; i++) out[i] = view.getFloat64(i * 8, true);
  return out;
}

const base64Pattern = /^[A-Za-z0-9+/]*={0,2}$/;

export function encodeBatch(b: Batch): EncodedBatch {
  return {
    first: b.first,
    count: b.count,
    grid: float32ToBase64(b.grid),
    figures: float64ToBase64(b.figures),
    status: Buffer.from(b.status).toString('base64'),
    regimenFigures: float64ToBase64(b.regimenFigures),
    regimenStatus: Buffer.from(b.regimenStatus).toString('base64'),
    methods: b.methods,
    // JSON has no NaN or infinity: a balance that is not finite is written as null.
    worstBalance: Number.isFinite(b.worstBalance) ? b.worstBalance : null,
    steadyMessage: b.steadyMessage,
  };
}

export function makePart(scenario: unknown, overrides: PopulationOverridesResolved, shard: { index: number; of: number }, batch: Batch): PartFile {
  return {
    format: PART_FORMAT,
    version: PART_VERSION,
    scenario,
    overrides,
    shard,
    first: batch.first,
    count: batch.count,
    fingerprint: partFingerprint(scenario, overrides),
    batch: encodeBatch(batch),
  };
}

type Read<T> = { ok: true; value: T } | { ok: false; message: string };

const isObject = (v: unknown): v is Record<string, unknown> => typeof v === 'object' && v !== null && !Array.isArray(v);
const isCount = (v: unknown): v is number => typeof v === 'number' && Number.isInteger(v) && v >= 0;

/** Reads a part file's JSON value: the envelope checked, the batch still encoded (decodeBatch needs the plan). */
export function readPart(value: unknown): Read<PartFile> {
  if (!isObject(value) || value.format !== PART_FORMAT) return { ok: false, message: `not a population part file (no "format": "${PART_FORMAT}"); parts are written by population --shard I/N --out FILE` };
  if (value.version !== PART_VERSION) return { ok: false, message: `a part of format version ${JSON.stringify(value.version)}; this program reads version ${PART_VERSION}` };
  const o = value.overrides;
  const s = value.shard;
  const b = value.batch;
  if (!isObject(o) || !isCount(o.subjects) || o.subjects < 1 || !isCount(o.seed)) return { ok: false, message: 'overrides: must hold the subjects and seed of the run' };
  if (!isObject(s) || !isCount(s.index) || !isCount(s.of) || s.index < 1 || s.index > s.of) return { ok: false, message: 'shard: must be { "index": I, "of": N } with 1 ≤ I ≤ N' };
  if (!isCount(value.first) || !isCount(value.count)) return { ok: false, message: 'first and count: must be whole numbers' };
  if (typeof value.fingerprint !== 'string') return { ok: false, message: 'fingerprint: is missing' };
  if (!isObject(b) || b.first !== value.first || b.count !== value.count) return { ok: false, message: 'batch: is missing or does not hold the subjects the part names' };
  for (const k of ['grid', 'figures', 'status', 'regimenFigures', 'regimenStatus']) {
    if (typeof b[k] !== 'string' || !base64Pattern.test(b[k] as string)) return { ok: false, message: `batch.${k}: must be base64 text` };
  }
  if (!Array.isArray(b.methods) || !b.methods.every((m) => typeof m === 'string')) return { ok: false, message: 'batch.methods: must be a list of words' };
  if (b.worstBalance !== null && typeof b.worstBalance !== 'number') return { ok: false, message: 'batch.worstBalance: must be a number' };
  if (b.steadyMessage !== null && typeof b.steadyMessage !== 'string') return { ok: false, message: 'batch.steadyMessage: must be text or null' };
  const overrides = { subjects: o.subjects, seed: o.seed };
  // The fingerprint is recomputed: a part edited by hand, or damaged, is not taken for another's.
  const fingerprint = partFingerprint(value.scenario, overrides);
  if (fingerprint !== value.fingerprint) return { ok: false, message: `the fingerprint ${JSON.stringify(value.fingerprint)} does not match the part's scenario and settings (${fingerprint}); the file was changed after it was written` };
  const expected = shardRange(overrides.subjects, s.index, s.of);
  if (expected.first !== value.first || expected.count !== value.count) {
    return { ok: false, message: `part ${s.index} of ${s.of} of ${overrides.subjects} subjects holds subjects ${expected.first} to ${expected.first + expected.count - 1}, but this one names ${value.first} to ${value.first + value.count - 1}` };
  }
  return { ok: true, value: value as unknown as PartFile };
}

/** The part's batch as typed arrays, its lengths checked against the plan rebuilt from the part's scenario. */
export function decodeBatch(e: EncodedBatch, plan: PopulationPlan): Read<Batch> {
  const B = plan.layout.banded.length;
  const T = plan.template.outputTimes.length;
  const variants = plan.regimens.length;
  const regimenColumns = plan.regimenLayout?.columns ?? 0;
  const grid = base64ToFloat32(e.grid);
  const figures = base64ToFloat64(e.figures);
  const regimenFigures = base64ToFloat64(e.regimenFigures);
  const status = new Uint8Array(Buffer.from(e.status, 'base64'));
  const regimenStatus = new Uint8Array(Buffer.from(e.regimenStatus, 'base64'));
  const want: [string, number | undefined, number][] = [
    ['grid', grid?.length, e.count * B * T],
    ['figures', figures?.length, e.count * plan.layout.columns],
    ['status', status.length, e.count],
    ['regimenFigures', regimenFigures?.length, variants * e.count * regimenColumns],
    ['regimenStatus', regimenStatus.length, variants * e.count],
  ];
  for (const [name, got, expected] of want) {
    if (got !== expected) return { ok: false, message: `batch.${name}: holds ${got ?? 'a broken run of'} values where the scenario gives ${expected}` };
  }
  return {
    ok: true,
    value: {
      first: e.first,
      count: e.count,
      grid: grid as Float32Array,
      figures: figures as Float64Array,
      status,
      regimenFigures: regimenFigures as Float64Array,
      regimenStatus,
      methods: e.methods,
      worstBalance: e.worstBalance ?? NaN,
      steadyMessage: e.steadyMessage,
    },
  };
}

/**
 * Whether the parts (already read, with the names to show) make up one run: the same
 * fingerprint, the same split, every part present once. The first problem as `name: message`
 * or a plain line; null when they fit.
 */
export function checkParts(parts: { name: string; part: PartFile }[]): string | null {
  if (parts.length === 0) return 'no part files given';
  const [first] = parts;
  for (const { name, part } of parts.slice(1)) {
    if (part.fingerprint !== first.part.fingerprint) {
      return `${name}: a part of another scenario or other settings (fingerprint ${part.fingerprint}; ${first.name} has ${first.part.fingerprint})`;
    }
    if (part.shard.of !== first.part.shard.of) return `${name}: part of a split into ${part.shard.of}, but ${first.name} is part of a split into ${first.part.shard.of}`;
  }
  const of = first.part.shard.of;
  const seen = new Map<number, string>();
  for (const { name, part } of parts) {
    const before = seen.get(part.shard.index);
    if (before !== undefined) return `${name}: part ${part.shard.index} of ${of} is given twice (also ${before})`;
    seen.set(part.shard.index, name);
  }
  const missing = Array.from({ length: of }, (_, k) => k + 1).filter((k) => !seen.has(k));
  if (missing.length > 0) {
    const list = missing.length <= 10 ? missing.join(', ') : `${missing.slice(0, 10).join(', ')}, …`;
    return missing.length === 1 ? `part ${missing[0]} of ${of} is missing` : `parts ${list} of ${of} are missing`;
  }
  return null;
}
