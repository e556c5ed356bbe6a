// Sweep speed: the 20-value sweep of the edge-preserving example (K = 0.01:0.2:20) on the 256×256 test
// card at 100 steps, PSNR at every step (target: under 10 s), on the worker pool with 1 and with 2 workers.
// Baseline in the same run: the same 20 settings evaluated one after another on this thread (no pool), so the
// ratios show the pool's overhead (1 worker) and its speed-up (2 workers). Prints figures; asserts nothing.
// Needs `npm run build` first (the pool spawns dist/tune-worker.js).

import { cpus } from 'node:os';
import { join } from 'node:path';
import { evaluateSetting } from '../../src/tune/evaluate';
import { expandGrid, parseVary } from '../../src/tune/grid';
import { loadProblem } from '../../src/tune/problem';
import { runSweep } from '../../src/tune/sweep';

async function main(): Promise<void> {
  const file = join(process.cwd(), 'examples/edge-preserving.fluxel');
  const problem = await loadProblem(file, { scene: 'card', noise: '0.1', seed: '1', size: '256x256' });
  const axes = [parseVary(problem.scheme, 'K=0.01:0.2:20')];
  const steps = 100;
  console.log(`machine: ${cpus().length} cores (${cpus()[0]?.model ?? 'unknown'}), node ${process.version}`);
  console.log(`sweep: edge-preserving, K = 0.01:0.2:20, card 256×256, noise 0.1, ${steps} steps, PSNR at every step`);

  // Baseline: in-process, one setting after another.
  const t0 = performance.now();
  const task = { image: problem.image, reference: problem.reference, steps, metric: 'psnr' as const };
  let best = -Infinity;
  for (const s of expandGrid(axes)) best = Math.max(best, evaluateSetting(problem.scheme, task, s).best);
  const base = (performance.now() - t0) / 1000;
  console.log(`  in-process, no pool:   ${base.toFixed(2)} s   (best PSNR ${best.toFixed(3)} dB)`);

  // CPU seconds (all threads of this process) per wall second show how many cores the run really got:
  // on a machine shared with other jobs the wall-clock speed-up alone can mislead.
  const times: Record<number, number> = {};
  for (const workers of [1, 2]) {
    const c0 = process.cpuUsage();
    const r = await runSweep(problem, { axes, steps, metric: 'psnr', workers });
    const c = process.cpuUsage(c0);
    times[workers] = r.seconds;
    const cores = (c.user + c.system) / 1e6 / r.seconds;
    const cpu = (c.user + c.system) / 1e6;
    console.log(`  pool, ${workers} worker(s):     ${r.seconds.toFixed(2)} s   ratio to in-process ${(r.seconds / base).toFixed(2)}   CPU ${cpu.toFixed(2)} s, cores used ${cores.toFixed(2)}   (best PSNR ${r.curves[r.bestIndex].best.toFixed(3)} dB)`);
    // What the same work would take with each worker on a core of its own (an estimate, labelled as such).
    console.log(`    estimate on an otherwise idle machine: CPU / ${workers} = ${(cpu / workers).toFixed(2)} s`);
  }
  const { loadavg } = await import('node:os');
  console.log(`  load average while measuring: ${loadavg().map((v) => v.toFixed(1)).join(', ')} (on ${cpus().length} cores)`);
  console.log(`  speed-up 2 workers vs 1: ${(times[1] / times[2]).toFixed(2)}×`);
  console.log(`  target: 20-value sweep under 10 s — ${times[2] < 10 ? 'met' : 'NOT met'} (${times[2].toFixed(2)} s with 2 workers)`);

  // SSIM costs more per step than PSNR; show it for the same sweep on 2 workers.
  const ssim = await runSweep(problem, { axes, steps, metric: 'ssim', workers: 2 });
  console.log(`  same sweep by SSIM, 2 workers: ${ssim.seconds.toFixed(2)} s   ratio to PSNR ${(ssim.seconds / times[2]).toFixed(2)}`);
}

main().catch((err) => {
  console.error(err);
  process.exitCode = 1;
});
