// Test helpers for the engine: check a scheme's text (failing loudly on diagnostics), random images, tolerances.
import { expect } from 'vitest';
import { parseAndCheck } from '../../../src/notation/index';
import type { CheckedScheme } from '../../../src/notation/scheme';

export function schemeOf(text: string): CheckedScheme {
  const r = parseAndCheck(text);
  const errors = r.diagnostics.filter(d => d.severity === 'error');
  if (!r.scheme || errors.length) {
    throw new Error(`scheme has errors:\n${errors.map(d => `${d.range.start.line}:${d.range.start.column} ${d.message}`).join('\n')}`);
  }
  return r.scheme;
}

/** Deterministic uniform values in [0, 1) (mulberry32). */
export function randomImage(width: number, height: number, seed: number): { width: number; height: number; data: Float64Array } {
  let a = seed >>> 0;
  const data = new Float64Array(width * height);
  for (let i = 0; i < data.length; i++) {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    data[i] = ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  }
  return { width, height, data };
}

/** Largest absolute difference, with the index where it occurs. */
export function maxDiff(a: ArrayLike<number>, b: ArrayLike<number>): { diff: number; at: number } {
  expect(a.length, 'lengths differ').toBe(b.length);
  let diff = 0, at = -1;
  for (let i = 0; i < a.length; i++) {
    const d = Math.abs(a[i] - b[i]);
    if (!(d <= diff)) {
      diff = d;
      at = i;
    }
  }
  return { diff, at };
}

export function expectClose(a: ArrayLike<number>, b: ArrayLike<number>, tol: number, what: string): void {
  const { diff, at } = maxDiff(a, b);
  expect(diff <= tol, `${what}: max |difference| ${diff} at index ${at} exceeds tolerance ${tol}`).toBe(true);
}
