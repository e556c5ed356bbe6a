// Shared helpers of the hardening campaigns: the scale knob (FLUXEL_CAMPAIGN_SCALE), seeds, the one report line
// each campaign prints ("campaign NAME: N cases, F failures, ..."), and the diagnostic range rule (contracts.md §4).
// The report line is printed with console.log and appended to test/out/campaigns.txt, which test/tools/all-layers.sh
// prints after the hardening layer, so the counts appear in the CI log whatever the reporter does with test output.

import { appendFileSync, mkdirSync } from 'node:fs';
import { join } from 'node:path';
import type { Diagnostic } from '../../src/notation/diagnostics';

export const ROOT = join(__dirname, '../..');
export const OUT = join(ROOT, 'test/out');

/** Multiplies every campaign's case count: 1 in CI, e.g. FLUXEL_CAMPAIGN_SCALE=10 for the long runs. */
export function campaignScale(): number {
  const raw = Number(process.env.FLUXEL_CAMPAIGN_SCALE ?? '1');
  return Number.isFinite(raw) && raw > 0 ? raw : 1;
}

/** The seed of every campaign; FLUXEL_CAMPAIGN_SEED picks another one for exploratory long runs. */
export function campaignSeed(dflt: number): number {
  const raw = Number(process.env.FLUXEL_CAMPAIGN_SEED);
  return Number.isInteger(raw) ? raw : dflt;
}

export function scaled(n: number): number {
  return Math.max(1, Math.round(n * campaignScale()));
}

/** Prints and records one campaign line: `campaign NAME: N cases, F failures[, extra]`. */
export function report(name: string, cases: number, failures: number, extra = ''): string {
  const line = `campaign ${name}: ${cases} cases, ${failures} failures${extra ? `, ${extra}` : ''}`;
  console.log(line);
  mkdirSync(OUT, { recursive: true });
  appendFileSync(join(OUT, 'campaigns.txt'), line + '\n');
  return line;
}

/** mulberry32: a small seeded generator (common practice for reproducible test data). */
export function rng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/**
 * Why a diagnostic's range is not a valid range of `text`, or null when it is: 1-based lines and UTF-16 columns
 * inside the document, end not before start, offsets agreeing with line and column (contracts.md §4).
 */
export function rangeProblem(text: string, d: Diagnostic): string | null {
  const lines = text.split(/\r\n|\r|\n/);
  const { start, end } = d.range;
  const ok = (p: { line: number; column: number; offset: number }): boolean =>
    Number.isInteger(p.line) && Number.isInteger(p.column) && Number.isInteger(p.offset) &&
    p.line >= 1 && p.line <= lines.length && p.column >= 1 && p.column <= lines[p.line - 1].length + 1 &&
    p.offset >= 0 && p.offset <= text.length;
  if (!ok(start)) return `start ${JSON.stringify(start)} outside the document`;
  if (!ok(end)) return `end ${JSON.stringify(end)} outside the document`;
  if (end.offset < start.offset || end.line < start.line) return `end ${JSON.stringify(end)} before start ${JSON.stringify(start)}`;
  // The offset must name the same place as line and column.
  const lineStart = (line: number): number => {
    let off = 0;
    const re = /\r\n|\r|\n/g;
    for (let l = 1; l < line; l++) {
      const m = re.exec(text);
      if (!m) return -1;
      off = m.index + m[0].length;
    }
    return off;
  };
  for (const p of [start, end]) {
    if (lineStart(p.line) + p.column - 1 !== p.offset) return `offset ${p.offset} disagrees with ${p.line}:${p.column}`;
  }
  if (!d.message || typeof d.message !== 'string') return 'empty message';
  return null;
}
