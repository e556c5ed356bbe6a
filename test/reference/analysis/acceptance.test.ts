// Acceptance checks of the stability analysis on the bundled examples (issue 4): every example gets a method
// and a limit that matches the published or hand-derived value, its declared dt is within it, and for the
// linear examples a step 10% over the limit is flagged on the `step` line and visibly grows the highest
// frequency when the engine runs it, while 10% under does not.
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { analyseStability, stabilityDiagnostics } from '../../../src/analysis/stability';
import { createRun } from '../../../src/engine';
import { parseAndCheck } from '../../../src/notation/index';
import type { CheckedScheme } from '../../../src/notation/scheme';

const EXAMPLES = join(__dirname, '../../../examples');

function source(name: string): string {
  return readFileSync(join(EXAMPLES, `${name}.fluxel`), 'utf8');
}

function scheme(text: string): CheckedScheme {
  const r = parseAndCheck(text);
  const errors = r.diagnostics.filter((d) => d.severity === 'error');
  if (!r.scheme) throw new Error(`scheme did not check: ${errors.map((d) => `${d.code}: ${d.message}`).join('; ')}`);
  return r.scheme;
}

function close(actual: number | null | undefined, expected: number, tol: number, what: string): void {
  expect(typeof actual === 'number', `${what}: got ${actual}, expected ${expected}`).toBe(true);
  const err = Math.abs((actual as number) - expected);
  expect(err <= tol, `${what}: got ${actual}, expected ${expected}, |error| ${err} > tolerance ${tol}`).toBe(true);
}

/** The example's text with its `step` line replaced by `step dt = VALUE` (no range, so any value checks). */
function withDt(text: string, dt: number): { text: string; line: number; length: number } {
  const lines = text.split('\n');
  const i = lines.findIndex((l) => /^step\s/.test(l));
  lines[i] = `step dt = ${dt}`;
  return { text: lines.join('\n'), line: i + 1, length: lines[i].length };
}

// Expected limit of every example, with where it comes from.
const EXPECTED: Record<string, { method: string; limit: number; why: string }> = {
  // Morton & Mayers, Numerical Solution of PDEs, 2nd ed. 2005, §2.6: FTCS heat needs dt/h² ≤ 1/2 (h = 1).
  'heat-1d': { method: 'von-neumann', limit: 0.5, why: 'FTCS 1d' },
  // Morton & Mayers 2005, §3.2: the 5-point explicit scheme needs dt/h² ≤ 1/4.
  'heat-2d': { method: 'von-neumann', limit: 0.25, why: 'FTCS 2d' },
  // Weickert, ter Haar Romeny, Viergever, IEEE TIP 7(3) 1998, §III: 0 ≤ g ≤ 1 in m = 2 dimensions: dt ≤ 1/4.
  'edge-preserving': { method: 'positivity', limit: 0.25, why: 'Perona–Malik' },
  // Same criterion with diagonal links weighted 1/2: centre 1 − dt(4 + 4·½) ≥ 0, dt ≤ 1/6 (derivation ours).
  'eight-neighbour': { method: 'positivity', limit: 1 / 6, why: '8 neighbours' },
  // Same criterion (derivation ours): g = 1/√(ε² + s²) ≤ 1/ε = 10, each link (g + g[n])/2 ≤ 10, four links:
  // centre 1 − 40 dt ≥ 0, dt ≤ 1/40.
  'tv-flow': { method: 'positivity', limit: 0.025, why: 'regularised TV' },
  // CFL 1928; symplectic Euler with the 5-point Laplacian: c·dt/h ≤ 1/√2, c = 1 (derivation in stability.test.ts).
  wave: { method: 'von-neumann', limit: Math.SQRT1_2, why: 'wave' },
  // CFL 1928, LeVeque 2007 §10.7: upwind needs c·dt/h ≤ 1, c = 0.8: dt ≤ 1.25.
  'upwind-transport': { method: 'von-neumann', limit: 1.25, why: 'upwind' },
};

describe('every example reports a method and a limit, and its dt is within it', () => {
  for (const [name, want] of Object.entries(EXPECTED)) {
    it(`${name}: ${want.method}, dt ≤ ${want.limit.toPrecision(6)} (${want.why})`, () => {
      const s = scheme(source(name));
      const r = analyseStability(s);
      expect(r.method).toBe(want.method);
      close(r.limit, want.limit, 1e-6 * want.limit, `${name} limit`);
      expect(r.stable, `${name}: declared dt ${r.dt} within ${r.limit}`).toBe(true);
      expect(r.reason.length > 0).toBe(true);
    });
  }

  // Gray–Scott (Pearson, Science 261, 1993): at a = 1, b = 0 the linearisation needs dt ≤ 2/(8Da + F) and
  // dt ≤ 2/(8Db + F + k) (derivation in stability.test.ts); inside the seeded spot the reaction terms shorten
  // the bound, so the estimate is at most that value. The diffusion part alone needs dt ≤ 1/(4 max(Da, Db)).
  it('gray-scott: a labelled linearised estimate, at most the trivial-state bound, with the diffusion limit', () => {
    const s = scheme(source('gray-scott'));
    const r = analyseStability(s);
    expect(r.method).toBe('linearised');
    expect(r.estimate).toBe(true);
    const trivial = Math.min(2 / (8 * 0.2 + 0.037), 2 / (8 * 0.1 + 0.037 + 0.06));
    expect(typeof r.limit === 'number' && r.limit > 0 && r.limit <= trivial * (1 + 1e-9), `estimate ${r.limit} ≤ ${trivial}`).toBe(true);
    close(r.diffusionLimit, 1 / (4 * 0.2), 1e-9, 'diffusion limit');
    expect(r.stable, `declared dt ${r.dt} within ${r.limit}`).toBe(true);
    expect(r.worst && 'x' in r.worst, 'the worst pixel is reported').toBe(true);
  });
});

/** Amplitude of the checkerboard (−1)^(x+y) in a field: the projection on the highest-frequency mode. */
function checkerAmplitude(data: ArrayLike<number>, width: number, height: number): number {
  let s = 0;
  let mean = 0;
  for (let k = 0; k < data.length; k++) mean += data[k];
  mean /= data.length;
  for (let y = 0; y < height; y++) for (let x = 0; x < width; x++) s += ((x + y) % 2 === 0 ? 1 : -1) * (data[y * width + x] - mean);
  return Math.abs(s) / (width * height);
}

interface Growth { readonly start: number; readonly end: number; readonly peak: number }

/** Runs `s` at its declared dt in Float64 and follows the checkerboard amplitude of field `fieldName`. */
function followCheckerboard(s: CheckedScheme, fieldName: string, steps: number, image: { width: number; height: number; data: Float64Array } | null): Growth {
  const run = createRun(s, { image, steps, dtype: 'float64', width: 32, height: 32 });
  const k = s.fields.findIndex((f) => f.name === fieldName);
  const g = run.geometry;
  const start = checkerAmplitude(run.fieldData(k), g.width, g.height);
  let peak = start;
  for (let i = 0; i < steps; i++) {
    run.step();
    peak = Math.max(peak, checkerAmplitude(run.fieldData(k), g.width, g.height));
  }
  return { start, end: checkerAmplitude(run.fieldData(k), g.width, g.height), peak };
}

/**
 * A smooth cosine plus a small checkerboard, so the highest-frequency mode starts at a known, small amplitude.
 * The cosine (one period across an even width) has no checkerboard component, unlike a ramp.
 */
function perturbed(width: number, height: number): { width: number; height: number; data: Float64Array } {
  const data = new Float64Array(width * height);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) data[y * width + x] = 0.5 + 0.2 * Math.cos((2 * Math.PI * x) / width) + 0.01 * ((x + y) % 2 === 0 ? 1 : -1);
  }
  return { width, height, data };
}

// The linear examples, with the field to watch, the input and the amplification of the checkerboard mode
// 10% over and 10% under the limit (derivations ours, from the symbols in the reference tests above):
// heat 1d: G(π) = 1 − 4r → r = 0.55: −1.2, r = 0.45: −0.8; heat 2d: G(π, π) = 1 − 8r, same numbers;
// upwind: G(π) = 1 − 2ν → ν = 1.1: −1.2, ν = 0.9: −0.8; wave: trace 2 − 8(c·dt)², det 1 → c·dt = 1.1/√2:
// |λ| ≈ 2.43, c·dt = 0.9/√2: |λ| = 1 (on the unit circle, bounded oscillation).
// Under the limit the decaying schemes never exceed their start (|G| = 0.8 < 1). For the wave, with a = 8(c·dt)²
// the mode's height obeys u_{n+1} = (2 − a)u_n − u_{n−1}, u_0 = 1, u_1 = 1 − a (v starts at 0), whose
// oscillation has amplitude 2/√(4 − a) = 2/√0.76 ≈ 2.294 at c·dt = 0.9/√2 (derivation ours).
const WAVE_BOUND = 2 / Math.sqrt(4 - 8 * 0.81 / 2);
const LINEAR: {
  name: string; field: string; image: (() => { width: number; height: number; data: Float64Array }) | null;
  steps: number; calmPeak: number; calmEnd: number;
}[] = [
  { name: 'heat-1d', field: 'u', image: () => perturbed(64, 1), steps: 40, calmPeak: 1 + 1e-9, calmEnd: 0.01 },
  { name: 'heat-2d', field: 'u', image: () => perturbed(32, 32), steps: 40, calmPeak: 1 + 1e-9, calmEnd: 0.01 },
  { name: 'upwind-transport', field: 'u', image: () => perturbed(32, 32), steps: 40, calmPeak: 1 + 1e-9, calmEnd: 0.01 },
  { name: 'wave', field: 'u', image: null, steps: 25, calmPeak: WAVE_BOUND * 1.02, calmEnd: WAVE_BOUND * 1.02 },
];

describe('10% over the limit: a warning on the step line and a growing highest frequency; 10% under: neither', () => {
  for (const ex of LINEAR) {
    it(`${ex.name}`, () => {
      let text = source(ex.name);
      // The wave example starts from declared values: add a small checkerboard to its height field.
      if (ex.image === null) text = text.replace(/^field u = (.*)$/m, 'field u = $1 + 0.01 * cos(pi * (x + y))');
      const limit = analyseStability(scheme(text)).limit as number;
      expect(limit > 0, `${ex.name} has a limit`).toBe(true);

      const over = withDt(text, 1.1 * limit);
      const so = scheme(over.text);
      const ro = analyseStability(so);
      expect(ro.stable).toBe(false);
      const warn = stabilityDiagnostics(so, ro).filter((d) => d.code === 'step-over-limit');
      expect(warn.length, 'one step-over-limit diagnostic').toBe(1);
      expect(warn[0].severity).toBe('warning');
      expect(warn[0].range.start).toMatchObject({ line: over.line, column: 1 });
      expect(warn[0].range.end).toMatchObject({ line: over.line, column: over.length + 1 });

      const under = withDt(text, 0.9 * limit);
      const su = scheme(under.text);
      const ru = analyseStability(su);
      expect(ru.stable).toBe(true);
      expect(stabilityDiagnostics(su, ru).map((d) => d.code)).not.toContain('step-over-limit');

      const grow = followCheckerboard(so, ex.field, ex.steps, ex.image?.() ?? null);
      const calm = followCheckerboard(su, ex.field, ex.steps, ex.image?.() ?? null);
      expect(grow.start > 1e-3, `${ex.name}: the checkerboard starts visible (${grow.start})`).toBe(true);
      // Over the limit: at least |−1.2|^steps/10 of growth (1.2^40 ≈ 1470; 2.43^25 ≈ 4e9), i.e. ≥ 100×.
      expect(grow.end / grow.start > 100, `${ex.name} over the limit: checkerboard grew ${grow.end / grow.start}× in ${ex.steps} steps`).toBe(true);
      // Under the limit: it decays (0.8^40 ≈ 1e-4) or, for the wave, stays within its oscillation amplitude.
      expect(calm.peak / calm.start <= ex.calmPeak, `${ex.name} under the limit: checkerboard peaked at ${calm.peak / calm.start}× its start (bound ${ex.calmPeak})`).toBe(true);
      expect(calm.end / calm.start <= ex.calmEnd, `${ex.name} under the limit: checkerboard ended at ${calm.end / calm.start}× its start (bound ${ex.calmEnd})`).toBe(true);
    });
  }
});
