// `fluxel fit FILE --scene S --free K,sigma [--metric psnr|ssim] [--steps N]`: finds the best values of the free
// parameters inside their declared ranges jointly with the best step, and prints them (or one JSON object).
// Node-only front end over src/tune; must not import vscode.

import { parseFree } from '../tune/grid';
import { runFit } from '../tune/fit';
import { defaultWorkers } from '../tune/pool';
import { loadProblem, parseMetric, parseWhole, ProblemError, PROBLEM_OPTIONS, PROBLEM_USAGE, showMetric, toJson, tuneFailure } from '../tune/problem';
import { guard, parseCommandLine, UsageError } from './args';

const USAGE = [
  `usage: fluxel fit ${PROBLEM_USAGE}`,
  '                  --free NAME[,NAME...] [--method derivative-free|gradient] [--max-evals N] [--json]',
  '  NAME is a declared param with a range `in [LO, HI]`, or dt. Each setting is scored by its best step.',
  '  --method derivative-free (default): golden-section search for one name, Nelder–Mead with projection for more;',
  '  for any scheme, smooth or not. --method gradient: projected gradient with an Armijo line search (Bertsekas 1976)',
  '  on the exact derivatives of the engine\'s sensitivity mode; for schemes smooth in the names. Default --metric psnr, --max-evals 60.',
].join('\n');

const OPTIONS = { ...PROBLEM_OPTIONS, free: { type: 'string' }, method: { type: 'string' }, 'max-evals': { type: 'string' }, json: { type: 'boolean' }, help: { type: 'boolean', short: 'h' } } as const;

export function fitMain(argv: string[]): Promise<number> {
  return guard('fit', async () => {
    const { values: o, positionals } = parseCommandLine(argv, OPTIONS, USAGE);
    if (o.help) {
      process.stdout.write(USAGE + '\n');
      return 0;
    }
    if (positionals.length !== 1) throw new UsageError(`expected one FILE.\n${USAGE}`);
    try {
      if (o.free === undefined) throw new ProblemError('--free NAME[,NAME...] is required: the parameters to fit.', 2);
      const metric = parseMetric(o.metric);
      const methodName = o.method ?? 'derivative-free';
      if (methodName !== 'derivative-free' && methodName !== 'gradient') throw new ProblemError(`--method takes derivative-free or gradient, got '${o.method}'.`, 2);
      const workers = o.workers === undefined ? defaultWorkers() : parseWhole(o.workers, '--workers', 1, 64);
      const maxEvaluations = o['max-evals'] === undefined ? 60 : parseWhole(o['max-evals'], '--max-evals', 4, 10000);
      const problem = await loadProblem(positionals[0], o);
      const free = parseFree(problem.scheme, o.free);
      const steps = o.steps === undefined ? problem.scheme.steps : parseWhole(o.steps, '--steps', 0, 1_000_000);
      if (metric === 'ssim' && (problem.image.width < 11 || problem.image.height < 11)) {
        throw new ProblemError(`SSIM needs at least 11×11 pixels; the scene is ${problem.image.width}×${problem.image.height}. Use --metric psnr or a larger --size.`, 2);
      }
      let bar: { update(n: number): void; stop(): void } | null = null;
      if (process.stderr.isTTY && !o.json) {
        const { SingleBar, Presets } = await import('cli-progress');
        const b = new SingleBar({ stream: process.stderr, format: 'fluxel fit [{bar}] {value}/{total} evaluations (at most)', hideCursor: true }, Presets.shades_classic);
        b.start(maxEvaluations, 0);
        bar = b;
      }
      let r;
      try {
        r = await runFit(problem, { free, steps, metric, workers, maxEvaluations, method: methodName, dtype: o.float64 ? 'float64' : 'float32', onEvaluation: (n) => bar?.update(n) });
      } finally {
        bar?.stop();
      }
      if (o.json) {
        process.stdout.write(toJson({
          scheme: problem.file, sourceHash: problem.sourceHash, scene: problem.scene, noise: problem.noise, seed: problem.seed,
          ...(problem.inputs ? { inputs: problem.inputs } : {}),
          size: { width: problem.image.width, height: problem.image.height }, steps, metric, method: r.method,
          free: free.map(({ name, lo, hi }) => ({ name, lo, hi })),
          values: r.values, step: r.step, [metric]: r.best, noisy: r.noisy,
          evaluations: r.evaluations, runs: r.runs, stop: r.stop,
          ...(r.projectedGradient !== undefined ? { projectedGradient: r.projectedGradient, logScale: r.logScale } : {}),
          history: r.history, seconds: r.seconds,
        }));
        return 0;
      }
      const method = r.method === 'golden-section' ? 'golden-section search'
        : r.method === 'nelder-mead' ? 'Nelder–Mead with projection onto the ranges'
          : `projected gradient with exact derivatives${r.logScale?.length ? ` (${r.logScale.join(', ')} on a log scale)` : ''}`;
      process.stdout.write([
        `${problem.file} on ${problem.scene} (noise ${problem.noise}, seed ${problem.seed}, ${problem.image.width}×${problem.image.height}), ${steps} steps, ${method}:`,
        ...free.map((f) => `  ${f.name} = ${Number(r.values[f.name].toPrecision(6))}   (range [${f.lo}, ${f.hi}])`),
        `  best step ${r.step}: ${metric} ${showMetric(metric, r.best)}   (noisy input ${showMetric(metric, r.noisy)})`,
        `  ${r.evaluations} evaluations${r.runs !== r.evaluations ? ` (${r.runs} engine runs: one with ${free.length} tangents counts as ${1 + free.length})` : ''}, stopped on ${r.stop === 'tolerance' ? 'tolerance' : 'the evaluation limit'}, ${r.seconds.toFixed(2)} s`,
        `  to keep them: --set ${free.map((f) => `${f.name}=${Number(r.values[f.name].toPrecision(6))}`).join(' --set ')} --steps ${r.step}`,
      ].join('\n') + '\n');
      return 0;
    } catch (err) {
      return tuneFailure('fit', err, USAGE);
    }
  });
}
