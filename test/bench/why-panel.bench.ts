// What the live run's "see why" views cost in its analysis thread, per bundled example: the frequency map and the
// modified-equation summary against the static verdict computed for the same run (baseline), and, for the 2-D
// examples on a 256×256 scene, the influence map of the centre pixel after N steps against the engine run of the
// same N steps (baseline: the replay alone is part of the influence map's cost), and the A/B metrics of one result.
// Prints figures and ratios; asserts nothing.

import { readdirSync, readFileSync } from 'node:fs';
import { cpus, loadavg } from 'node:os';
import { join } from 'node:path';
import { createRun } from '../../src/engine';
import { compareResult, computeApproximates, computeInfluence, computeSpectrum, computeVerdict } from '../../src/extension/preview/analysisCompute';
import { makeScene } from '../../src/images/scenes';
import { parseAndCheck } from '../../src/notation';

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)];
}

function time(f: () => void, runs: number): number {
  f();
  const out: number[] = [];
  for (let k = 0; k < runs; k++) {
    const t0 = performance.now();
    f();
    out.push(performance.now() - t0);
  }
  return median(out);
}

const dir = join(process.cwd(), 'examples');
const files = readdirSync(dir).filter((f) => f.endsWith('.fluxel')).sort();
console.log(`machine: ${cpus().length} cores, load average ${loadavg().map((v) => v.toFixed(1)).join(' ')}`);
console.log('per example, median of 7 runs after one warm-up (ms); ratios against the verdict of the same knob values');
console.log(`${'example'.padEnd(22)} ${'verdict'.padStart(8)} ${'freq map'.padStart(9)} ${'ratio'.padStart(6)} ${'summary'.padStart(8)} ${'ratio'.padStart(6)}`);
for (const f of files) {
  const text = readFileSync(join(dir, f), 'utf8');
  const scheme = parseAndCheck(text).scheme;
  if (!scheme) continue;
  const knobs = { values: Object.fromEntries(scheme.params.map((p) => [p.name, p.value])), dt: scheme.dt };
  const v = time(() => computeVerdict(text, knobs), 7);
  let s = NaN;
  let a = NaN;
  try { s = time(() => computeSpectrum(text, knobs), 7); } catch (err) { console.log(`  ${f}: frequency map failed: ${String(err)}`); }
  try { a = time(() => computeApproximates(text, knobs), 7); } catch (err) { console.log(`  ${f}: summary failed: ${String(err)}`); }
  console.log(`${f.padEnd(22)} ${v.toFixed(1).padStart(8)} ${s.toFixed(1).padStart(9)} ${(s / v).toFixed(2).padStart(6)} ${a.toFixed(1).padStart(8)} ${(a / v).toFixed(2).padStart(6)}`);
}

const size = 256;
const scene = makeScene('survey', { width: size, height: size, noise: 0.1, seed: 7 });
console.log(`\ninfluence map of the centre pixel, ${size}×${size} survey scene (median of 3 runs, ms); baseline: the engine run of the same steps (float32)`);
console.log(`${'example'.padEnd(22)} ${'steps'.padStart(6)} ${'run'.padStart(8)} ${'influence'.padStart(10)} ${'ratio'.padStart(6)}`);
for (const f of files) {
  const text = readFileSync(join(dir, f), 'utf8');
  const scheme = parseAndCheck(text).scheme;
  if (!scheme || scheme.dims !== 2) continue;
  const steps = Math.min(scheme.steps, 60);
  const knobs = { values: Object.fromEntries(scheme.params.map((p) => [p.name, p.value])), dt: scheme.dt };
  const needsImage = scheme.fields.some((x) => x.init.kind === 'image');
  const image = needsImage ? scene.noisy : null;
  const field = scheme.updates[0]?.field ?? scheme.fields[0].name;
  const base = time(() => {
    const r = createRun(scheme, { ...(image ? { image } : { width: size, height: size }), steps, every: 0 });
    while (r.status === 'running' && r.stepIndex < steps) r.step();
  }, 3);
  let inf = NaN;
  try {
    inf = time(() => computeInfluence({ text, knobs, image, width: size, height: size, steps, x: size / 2, y: size / 2, field }), 3);
  } catch (err) {
    console.log(`  ${f}: ${String(err)}`);
  }
  console.log(`${f.padEnd(22)} ${String(steps).padStart(6)} ${base.toFixed(1).padStart(8)} ${inf.toFixed(1).padStart(10)} ${(inf / base).toFixed(2).padStart(6)}`);
}

const other = makeScene('survey', { width: size, height: size, noise: 0.12, seed: 8 });
const c = time(() => compareResult(scene.noisy, scene.clean, other.noisy), 7);
console.log(`\nA/B metrics of one ${size}×${size} result (PSNR, SSIM against the clean scene and against the pinned one, TV): ${c.toFixed(1)} ms (median of 7)`);
