// The engine against NumPy (test/bench/engine_numpy.py, Debian's /usr/bin/python3) and C (test/bench/engine_ref.c,
// gcc -O3 -march=native, one thread) on the SAME input image, written once to a raw Float32 file (issue 3).
// Prints times, ratios and the largest difference between outputs; asserts nothing. Run: node test/bench/run.mjs engine-native
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { benchImage, CASES, checked, EDGE, engineRun, handLoop, HEAT, maxAbsDiff, median, row, type Kind } from './engine-common';

const HERE = join(process.cwd(), 'test', 'bench');
const PYTHON = '/usr/bin/python3';
const dir = mkdtempSync(join(tmpdir(), 'fluxel-native-'));

interface Sample { wall: number; cpu: number; out: Float32Array }

function external(cmd: string, args: string[], outFile: string, n: number): Sample {
  const r = spawnSync(cmd, args, { encoding: 'utf8' });
  if (r.status !== 0) throw new Error(`${cmd} ${args.join(' ')} failed: ${r.stderr || r.error}`);
  const [wall, cpu] = r.stdout.trim().split(/\s+/).map(Number);
  const bytes = readFileSync(outFile);
  const out = new Float32Array(bytes.buffer, bytes.byteOffset, n * n);
  return { wall, cpu, out };
}

function main(): void {
  const gcc = spawnSync('gcc', ['-O3', '-march=native', '-o', join(dir, 'engine_ref'), join(HERE, 'engine_ref.c')], { encoding: 'utf8' });
  if (gcc.status !== 0) throw new Error(`gcc failed: ${gcc.stderr}`);
  const version = (cmd: string, args: string[]) => (spawnSync(cmd, args, { encoding: 'utf8' }).stdout || '').split('\n')[0].trim();
  console.log(`Same input image for every implementation (raw Float32 file); Float32, reflect; timed: the stepping loop only.`);
  console.log(`engine = generated JavaScript kernels with fused monitors (Node ${process.version}); hand = hand-written JS loop;`);
  console.log(`NumPy ${version(PYTHON, ['-c', 'import numpy; print(numpy.__version__)'])} (whole-array slicing); C = ${version('gcc', ['--version'])}, -O3 -march=native, one thread.`);
  console.log('Repetitions interleaved across the four implementations; medians. The machine is shared: CPU time is the steadier');
  console.log('figure (process.cpuUsage, time.process_time, CLOCK_PROCESS_CPUTIME_ID); ratios below are of CPU-time medians.\n');

  const schemes: Record<Kind, ReturnType<typeof checked>> = { edge: checked(EDGE), heat: checked(HEAT) };
  for (const kind of ['edge', 'heat'] as const) {
    for (let k = 0; k < 3; k++) {
      handLoop(kind, benchImage(128), 40);
      engineRun(schemes[kind], benchImage(128), 40);
    }
  }
  const widths = [16, 7, 6, 5, 10, 10, 10, 10, 11, 12, 12, 28];
  console.log(row(['case', 'size', 'steps', 'reps', 'engine s', 'hand s', 'NumPy s', 'C s', 'eng/hand', 'eng/NumPy', 'eng/C', 'max |diff| vs engine (N, C)'], widths));
  const lines: string[] = [];
  for (const c of CASES) {
    const img = benchImage(c.n);
    const input = join(dir, `in-${c.n}.raw`);
    writeFileSync(input, new Uint8Array(img.data.buffer, img.data.byteOffset, img.data.byteLength));
    const reps = c.n <= 512 ? 7 : 5;
    const t = { engine: [] as Sample[], hand: [] as Sample[], numpy: [] as Sample[], c: [] as Sample[] };
    const runners: [keyof typeof t, () => Sample][] = [
      ['engine', () => engineRun(schemes[c.kind], img, c.steps)],
      ['hand', () => handLoop(c.kind, img, c.steps)],
      ['numpy', () => external(PYTHON, [join(HERE, 'engine_numpy.py'), c.kind, String(c.n), String(c.steps), input, join(dir, 'np.raw')], join(dir, 'np.raw'), c.n)],
      ['c', () => external(join(dir, 'engine_ref'), [c.kind, String(c.n), String(c.steps), input, join(dir, 'c.raw')], join(dir, 'c.raw'), c.n)],
    ];
    let dNumpy = 0, dC = 0;
    for (let r = 0; r < reps; r++) {
      // Rotate the order each repetition so no implementation always runs right after another's cache footprint.
      for (let k = 0; k < runners.length; k++) {
        const [name, go] = runners[(k + r) % runners.length];
        t[name].push(go());
      }
      const e = t.engine[t.engine.length - 1].out;
      dNumpy = Math.max(dNumpy, maxAbsDiff(e, t.numpy[t.numpy.length - 1].out));
      dC = Math.max(dC, maxAbsDiff(e, t.c[t.c.length - 1].out));
    }
    const cpu = (xs: Sample[]) => median(xs.map(s => s.cpu));
    const wall = (xs: Sample[]) => median(xs.map(s => s.wall));
    const [e, h, np, cc] = [cpu(t.engine), cpu(t.hand), cpu(t.numpy), cpu(t.c)];
    console.log(row([
      c.label, `${c.n}²`, c.steps, reps, e.toFixed(3), h.toFixed(3), np.toFixed(3), cc.toFixed(3),
      (e / h).toFixed(2), (e / np).toFixed(2), (e / cc).toFixed(2), `${dNumpy.toExponential(1)}, ${dC.toExponential(1)}`,
    ], widths));
    lines.push(`${row([c.label, `${c.n}²`], [16, 7])} wall medians: engine ${wall(t.engine).toFixed(3)} s, hand ${wall(t.hand).toFixed(3)} s, NumPy ${wall(t.numpy).toFixed(3)} s, C ${wall(t.c).toFixed(3)} s`);
  }
  console.log('\n' + lines.join('\n'));
  console.log('\nTargets (issue 3): engine/hand ≤ 1.25; engine faster than NumPy (eng/NumPy < 1) on edge-preserving at 2048².');
  console.log('Differences: Float32 storage everywhere, but JavaScript evaluates each step in Float64 while NumPy and C use Float32 arithmetic.');
}

try {
  main();
} finally {
  rmSync(dir, { recursive: true, force: true });
}
