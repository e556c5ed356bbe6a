// Costs of the "see why" work, each against a baseline measured in the same run (prints; asserts nothing):
// - per-step measures (drift, TV, energy, change) when every step is recorded, against the same run without them;
// - the change stop (RMS change every step) against the same number of plain steps;
// - modifiedEquation and frequencyMap per example, against the stability analysis of the same example;
// - the influence map of one pixel over N steps (adjoint sweep) against recording the trajectory it walks.

import { readdirSync, readFileSync } from 'node:fs';
import { cpus, loadavg } from 'node:os';
import { join } from 'node:path';
import { influenceMap } from '../../src/analysis/influence';
import { modifiedEquation } from '../../src/analysis/modifiedEquation';
import { frequencyMap } from '../../src/analysis/spectrum';
import { analyseStability } from '../../src/analysis/stability';
import { createRun, recordTrajectory } from '../../src/engine';
import { makeScene } from '../../src/images/scenes';
import { parseAndCheck } from '../../src/notation';

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)];
}

function timed(f: () => void): number {
  const t0 = performance.now();
  f();
  return performance.now() - t0;
}

console.log(`machine: ${cpus().length} cores, load average ${loadavg().map((v) => v.toFixed(1)).join(' ')}`);
const dir = join(process.cwd(), 'examples');
const read = (f: string) => parseAndCheck(readFileSync(join(dir, f), 'utf8')).scheme!;
const heat = read('heat-2d.fluxel');
const pm = read('edge-preserving.fluxel');
const image = makeScene('survey', { width: 256, height: 256 }).noisy;

console.log('\nper-step measures, every step recorded, 256×256, 40 steps (median of 7, interleaved)');
for (const [name, s] of [['heat-2d', heat], ['edge-preserving', pm]] as const) {
  const on: number[] = [], off: number[] = [];
  for (let k = 0; k < 7; k++) {
    off.push(timed(() => createRun(s, { image, steps: 40, every: 1, measures: false }).runSync()));
    on.push(timed(() => createRun(s, { image, steps: 40, every: 1 }).runSync()));
  }
  const a = median(off), b = median(on);
  console.log(`  ${name.padEnd(16)} without ${a.toFixed(1).padStart(7)} ms   with ${b.toFixed(1).padStart(7)} ms   ratio ${(b / a).toFixed(2)}x`);
}

console.log('\nchange stop (RMS change every step) vs plain steps, heat-2d 256×256, 200 steps (median of 7)');
{
  const on: number[] = [], off: number[] = [];
  for (let k = 0; k < 7; k++) {
    off.push(timed(() => createRun(heat, { image, steps: 200, measures: false }).runSync()));
    on.push(timed(() => createRun(heat, { image, steps: 200, measures: false, stopChange: 1e-12 }).runSync()));
  }
  const a = median(off), b = median(on);
  console.log(`  plain ${a.toFixed(1)} ms, with the change rule ${b.toFixed(1)} ms, ratio ${(b / a).toFixed(2)}x`);
}

console.log('\nanalysis per example (median of 9): stability (baseline), modified equation, frequency map 101×101');
for (const f of readdirSync(dir).filter((x) => x.endsWith('.fluxel')).sort()) {
  const s = read(f);
  const st: number[] = [], me: number[] = [], fm: number[] = [];
  for (let k = 0; k < 9; k++) {
    st.push(timed(() => analyseStability(s)));
    me.push(timed(() => modifiedEquation(s)));
    fm.push(timed(() => frequencyMap(s)));
  }
  const a = median(st);
  console.log(`  ${f.replace('.fluxel', '').padEnd(18)} stability ${a.toFixed(2).padStart(7)} ms   modified eq ${median(me).toFixed(2).padStart(7)} ms (${(median(me) / a).toFixed(2)}x)   frequency map ${median(fm).toFixed(2).padStart(7)} ms (${(median(fm) / a).toFixed(2)}x)`);
}

console.log('\ninfluence map of one pixel, 128×128 input, frozen weights (median of 3)');
const small = makeScene('survey', { width: 128, height: 128 }).noisy;
for (const [name, s] of [['heat-2d', heat], ['edge-preserving', pm]] as const) {
  for (const N of [5, 20]) {
    const rec: number[] = [], inf: number[] = [];
    let evals = 0;
    for (let k = 0; k < 3; k++) {
      let traj = null as ReturnType<typeof recordTrajectory> | null;
      rec.push(timed(() => { traj = recordTrajectory(s, N, { image: small }); }));
      inf.push(timed(() => { evals = influenceMap(s, traj!.states, { x: 64, y: 64 }).evaluations; }));
    }
    const a = median(rec), b = median(inf);
    console.log(`  ${name.padEnd(16)} N = ${String(N).padStart(2)}: recording ${a.toFixed(1).padStart(7)} ms, adjoint sweep ${b.toFixed(1).padStart(7)} ms (${(b / a).toFixed(1)}x), ${evals} stencil evaluations`);
  }
}
