/**
 * Reading generated PDFs back as a reviewer's tools would: the text with `pdftotext -layout`
 * and the document information with `pdfinfo` (poppler-utils), on files in the temp folder.
 */
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';

export const root = fileURLToPath(new URL('../../', import.meta.url));

export function readSample(name: string): Record<string, unknown> {
  return JSON.parse(readFileSync(join(root, 'samples', `${name}.json`), 'utf8')) as Record<string, unknown>;
}

let dir: string | null = null;
let counter = 0;

function tempFile(bytes: Uint8Array): string {
  dir ??= mkdtempSync(join(tmpdir(), 'tidemark-report-'));
  const path = join(dir, `report-${++counter}.pdf`);
  writeFileSync(path, bytes);
  return path;
}

export function removeTempFiles(): void {
  if (dir) rmSync(dir, { recursive: true, force: true });
  dir = null;
}

/** The text of each page, as `pdftotext -layout` lays it out (pages are separated by form feeds). */
export function pdfPages(bytes: Uint8Array): string[] {
  const text = execFileSync('pdftotext', ['-layout', '-enc', 'UTF-8', tempFile(bytes), '-'], { encoding: 'utf8', maxBuffer: 64 * 1024 * 1024 });
  const pages = text.split('\f');
  if (pages.length > 0 && pages[pages.length - 1].trim() === '') pages.pop();
  return pages;
}

/** `pdfinfo` fields (Title, Author, Pages, …). */
export function pdfInfo(bytes: Uint8Array): Record<string, string> {
  const text = execFileSync('pdfinfo', ['-enc', 'UTF-8', tempFile(bytes)], { encoding: 'utf8' });
  const info: Record<string, string> = {};
  for (const line of text.split('\n')) {
    const m = /^([^:]+):\s*(.*)$/.exec(line);
    if (m) info[m[1].trim()] = m[2].trim();
  }
  return info;
}

/** Collapses runs of spaces so a phrase can be found whatever the layout spacing. */
export function squeeze(text: string): string {
  return text.replace(/[ \t]+/g, ' ');
}

export function escapeRegExp(text: string): string {
  return text.replace(/[.*+?^${}()|[\]\\]/g, '\\$&');
}

/** A scenario whose integration fails (100 steps cannot reach 2000 h at rtol 1e-12): the engine's 422 case. */
export const failing = {
  title: 'Fictional step budget too small',
  compartments: [{ id: 'central', volume: 10 }],
  transfers: [{ from: 'central', vmax: 5, km: 0.5 }],
  doses: [{ into: 'central', amount: 100 }],
  output: { end: 2000, step: 10 },
  solver: { method: 'dopri5', maxSteps: 100, rtol: 1e-12, atol: 1e-14 },
};
