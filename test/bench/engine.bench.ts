// Engine speed against a hand-written typed-array loop for the same scheme (issue 3, "Speed and memory"), and the
// engine's peak memory at 2048² measured in a fresh process. Prints figures and ratios; asserts nothing.
// Run with: node test/bench/run.mjs engine   (NumPy and C comparisons: node test/bench/run.mjs engine-native)
import { spawnSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { jsBackend } from '../../src/engine/jsBackend';
import { createRun } from '../../src/engine/run';
import { benchImage, CASES, checked, EDGE, engineRun, handLoop, HEAT, maxAbsDiff, median, row, type Kind, type Timing } from './engine-common';

const EXAMPLE_EDGE = `grid 2d\nboundary reflect\nparam K = 0.06 in [0.005, 0.5]\nparam sigma = 1 in [0, 3]\nstep dt = 0.2\nsteps 1\n` +
  `field u = image\ndiffusivity g(s) = 1 / (1 + (s / K)^2)\nlet w = blur(u, sigma)\nu' = u + dt * sum n in N4: g(w[n] - w) * (u[n] - u)\n`;
const MEMORY_SCHEMES: Record<string, string> = { edge: EDGE, heat: HEAT, 'edge+blur': EXAMPLE_EDGE };

/**
 * The process's RSS high-water mark. Linux's VmHWM belongs to this address space; getrusage's maxRSS would not do,
 * since Linux carries it across exec from the parent (here the speed part of this bench, at ~190 MB).
 */
function peakRssBytes(): number {
  try {
    const m = /VmHWM:\s+(\d+) kB/.exec(readFileSync('/proc/self/status', 'utf8'));
    if (m) return Number(m[1]) * 1024;
  } catch {
    // Not Linux: fall back below.
  }
  return process.resourceUsage().maxRSS * 1024;
}

/** Child mode: one engine run in a fresh process, reporting the engine's own allocation and the peak RSS. */
function memoryChild(which: string, n: number, steps: number): void {
  const scheme = checked(MEMORY_SCHEMES[which]);
  const img = benchImage(n);
  const gc = (globalThis as { gc?: () => void }).gc;
  gc?.();
  const before = process.memoryUsage();
  const run = createRun(scheme, { image: img, steps, dtype: 'float32', backend: jsBackend });
  const created = process.memoryUsage();
  run.runSync();
  const after = process.memoryUsage();
  const peakRss = peakRssBytes();
  const out = {
    fields: scheme.fields.length, lets: scheme.lets.length, pixels: n * n,
    engineArrayBuffers: Math.max(created.arrayBuffers, after.arrayBuffers) - before.arrayBuffers,
    rssBefore: before.rss, peakRss,
  };
  process.stdout.write(JSON.stringify(out) + '\n');
}

function speed(): void {
  console.log('Engine vs a hand-written typed-array loop, Float32, reflect, one process.');
  console.log('Repetitions interleaved (the side that goes first alternates); medians of wall and of CPU time. The machine is');
  console.log('shared with other jobs: CPU time (process.cpuUsage) is the steadier figure; wall time is the engine\'s stepSeconds.');
  console.log('The engine\'s timed loop includes its fused NaN/extremum/growth monitors; the hand loop has none.\n');
  const widths = [16, 7, 6, 5, 9, 9, 9, 9, 10, 10, 12, 9, 10];
  console.log(row(['case', 'size', 'steps', 'reps', 'hand s', 'engine s', 'hand cpu', 'eng cpu', 'ratio wall', 'ratio cpu', 'cpu pairs', 'Mpx·st/s', 'max |diff|'], widths));
  const schemes: Record<Kind, ReturnType<typeof checked>> = { edge: checked(EDGE), heat: checked(HEAT) };
  // Warm-up on a small image so both sides are optimised before any timing.
  for (const kind of ['edge', 'heat'] as const) {
    for (let k = 0; k < 3; k++) {
      handLoop(kind, benchImage(128), 40);
      engineRun(schemes[kind], benchImage(128), 40);
    }
  }
  const summary: string[] = [];
  for (const c of CASES) {
    const img = benchImage(c.n);
    const reps = c.n <= 512 ? 11 : 7;
    const hand: Timing[] = [], eng: Timing[] = [], pairs: number[] = [];
    let diff = 0;
    for (let r = 0; r < reps; r++) {
      // Alternate which side goes first, so a slow spell on the shared machine hits both sides alike.
      const a = r % 2 === 0 ? handLoop(c.kind, img, c.steps) : null;
      const e = engineRun(schemes[c.kind], img, c.steps);
      const h = a ?? handLoop(c.kind, img, c.steps);
      hand.push(h);
      eng.push(e);
      pairs.push(e.cpu / h.cpu);
      diff = Math.max(diff, maxAbsDiff(h.out, e.out));
    }
    const mh = median(hand.map(t => t.wall)), me = median(eng.map(t => t.wall));
    const ch = median(hand.map(t => t.cpu)), ce = median(eng.map(t => t.cpu));
    const ps = [...pairs].sort((x, y) => x - y);
    console.log(row([
      c.label, `${c.n}²`, c.steps, reps, mh.toFixed(3), me.toFixed(3), ch.toFixed(3), ce.toFixed(3), (me / mh).toFixed(2), (ce / ch).toFixed(2),
      `${ps[0].toFixed(2)}–${ps[ps.length - 1].toFixed(2)}`, ((c.n * c.n * c.steps) / ce / 1e6).toFixed(0), diff.toExponential(1),
    ], widths));
    summary.push(`${c.label} ${c.n}²: ${(ce / ch).toFixed(2)}`);
  }
  console.log('\nTarget (issue 3): engine/hand ≤ 1.25. "cpu pairs": smallest and largest engine/hand CPU ratio within one repetition.');
  console.log(`engine/hand (CPU medians): ${summary.join('; ')}`);
}

function memory(): void {
  console.log('\nPeak memory at 2048², one fresh process per case (node --expose-gc).');
  console.log('target = (fields + let-fields + 2) × 4 bytes × pixels + 80 MB (issue 3); peak RSS is the whole process');
  console.log('(Node itself, the 16 MB input image and the engine); engine = typed arrays the engine allocated (process.memoryUsage().arrayBuffers delta).\n');
  const widths = [12, 8, 12, 12, 12, 12, 8];
  console.log(row(['scheme', 'steps', 'engine MB', 'RSS start MB', 'peak RSS MB', 'target MB', 'within'], widths));
  const MB = 2 ** 20;
  for (const which of Object.keys(MEMORY_SCHEMES)) {
    const n = 2048, steps = 20;
    const r = spawnSync(process.execPath, ['--expose-gc', __filename, 'memory', which, String(n), String(steps)], { encoding: 'utf8' });
    if (r.status !== 0) throw new Error(`memory child failed: ${r.stderr}`);
    const m = JSON.parse(r.stdout) as { fields: number; lets: number; pixels: number; engineArrayBuffers: number; rssBefore: number; peakRss: number };
    const target = (m.fields + m.lets + 2) * 4 * m.pixels + 80 * MB;
    console.log(row([which, steps, (m.engineArrayBuffers / MB).toFixed(1), (m.rssBefore / MB).toFixed(0), (m.peakRss / MB).toFixed(0), (target / MB).toFixed(0), m.peakRss <= target ? 'yes' : 'NO'], widths));
  }
}

if (process.argv[2] === 'memory') memoryChild(process.argv[3], Number(process.argv[4]), Number(process.argv[5]));
else {
  speed();
  memory();
}
