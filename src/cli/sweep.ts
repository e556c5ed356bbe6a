// `fluxel sweep FILE --scene S --vary NAME=LO:HI:COUNT [--vary ...]`: runs a grid of settings on a worker pool,
// measures PSNR or SSIM at every step, and writes DIR/sweep.csv, DIR/sweep.json and the heat map DIR/sweep.png.
// Node-only front end over src/tune; must not import vscode.

import { promises as fs } from 'node:fs';
import * as path from 'node:path';
import { parseVary } from '../tune/grid';
import { encodeRgbPng, renderHeatmap } from '../tune/heatmap';
import { defaultWorkers } from '../tune/pool';
import { loadProblem, parseMetric, parseWhole, ProblemError, PROBLEM_OPTIONS, PROBLEM_USAGE, showMetric, toJson, tuneFailure, writeAtomically } from '../tune/problem';
import { runSweep, sweepCsv, sweepHeatmap, sweepSummary } from '../tune/sweep';
import { guard, parseCommandLine, UsageError } from './args';

const USAGE = [
  `usage: fluxel sweep ${PROBLEM_USAGE}`,
  '                    --vary NAME=LO:HI:COUNT [--vary NAME=LO:HI:COUNT] [--out DIR]',
  '  NAME is a declared param or dt; values must lie in its declared range. Default: --metric psnr, --out out/sweep,',
  '  --steps from the scheme, --workers = number of cores. Writes sweep.csv, sweep.json and sweep.png into DIR.',
].join('\n');

const OPTIONS = { ...PROBLEM_OPTIONS, vary: { type: 'string', multiple: true }, out: { type: 'string' }, help: { type: 'boolean', short: 'h' } } as const;

export function sweepMain(argv: string[]): Promise<number> {
  return guard('sweep', async () => {
    const { values: o, positionals } = parseCommandLine(argv, OPTIONS, USAGE);
    if (o.help) {
      process.stdout.write(USAGE + '\n');
      return 0;
    }
    if (positionals.length !== 1) throw new UsageError(`expected one FILE.\n${USAGE}`);
    try {
      const metric = parseMetric(o.metric);
      const workers = o.workers === undefined ? defaultWorkers() : parseWhole(o.workers, '--workers', 1, 64);
      const varies = o.vary ?? [];
      if (varies.length < 1 || varies.length > 2) throw new ProblemError('give one or two --vary NAME=LO:HI:COUNT options.', 2);
      const problem = await loadProblem(positionals[0], o);
      const axes = varies.map((v) => parseVary(problem.scheme, v));
      if (axes.length === 2 && axes[0].name === axes[1].name) throw new ProblemError(`--vary names ${axes[0].name} twice.`, 2);
      const steps = o.steps === undefined ? problem.scheme.steps : parseWhole(o.steps, '--steps', 0, 1_000_000);
      if (metric === 'ssim' && (problem.image.width < 11 || problem.image.height < 11)) {
        throw new ProblemError(`SSIM needs at least 11×11 pixels; the scene is ${problem.image.width}×${problem.image.height}. Use --metric psnr or a larger --size.`, 2);
      }
      const out = o.out ?? path.join('out', 'sweep');
      await fs.mkdir(out, { recursive: true });

      // A progress bar only on a terminal; pipes and CI logs stay quiet.
      const total = axes.reduce((n, a) => n * a.count, 1);
      let bar: { update(n: number): void; stop(): void } | null = null;
      if (process.stderr.isTTY) {
        const { SingleBar, Presets } = await import('cli-progress');
        const b = new SingleBar({ stream: process.stderr, format: 'fluxel sweep [{bar}] {value}/{total} settings', hideCursor: true }, Presets.shades_classic);
        b.start(total, 0);
        bar = b;
      }
      const opts = { axes, steps, metric, workers, dtype: o.float64 ? ('float64' as const) : ('float32' as const), onResult: (done: number) => bar?.update(done) };
      let result;
      try {
        result = await runSweep(problem, opts);
      } finally {
        bar?.stop();
      }
      const files = { csv: path.join(out, 'sweep.csv'), json: path.join(out, 'sweep.json'), png: path.join(out, 'sweep.png') };
      await writeAtomically(files.csv, sweepCsv(axes, metric, result));
      await writeAtomically(files.png, encodeRgbPng(renderHeatmap(sweepHeatmap(problem, opts, result))));
      const summary = sweepSummary(problem, opts, result, files);
      await writeAtomically(files.json, toJson(summary));

      const lines = [`${problem.file}: ${total} settings × ${steps + 1} steps on ${problem.scene} (noise ${problem.noise}, seed ${problem.seed}), ${result.seconds.toFixed(2)} s on ${Math.min(workers, total)} worker(s)`];
      lines.push(`noisy input: ${metric} ${showMetric(metric, summary.noisy ?? Number.NaN)}`);
      if (result.bestIndex >= 0) {
        const s = result.settings[result.bestIndex];
        const c = result.curves[result.bestIndex];
        lines.push(`best: ${axes.map((a) => `${a.name} = ${s[a.name]}`).join(', ')}, step ${c.bestStep}: ${metric} ${showMetric(metric, c.best)}`);
      } else lines.push('best: none (every run blew up)');
      const blown = result.curves.filter((c) => c.status === 'blow-up').length;
      if (blown) lines.push(`warning: ${blown} of ${total} settings blew up (their later steps have no value)`);
      lines.push(`wrote ${files.csv}, ${files.json}, ${files.png}`);
      process.stdout.write(lines.join('\n') + '\n');
      return 0;
    } catch (err) {
      return tuneFailure('sweep', err, USAGE);
    }
  });
}
