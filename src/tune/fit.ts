// `fluxel fit`'s search: the best values of the free parameters inside their declared ranges, jointly with the
// best step. Each evaluated setting is run for the full number of steps and scored by its best step's metric;
// the optimiser (golden-section for one name, bounded Nelder–Mead for more; optimise.ts) minimises minus that.
// With method 'gradient' each evaluation runs in the engine's sensitivity mode and the projected-gradient method
// (Bertsekas 1976; optimise.ts) uses the exact derivative of the best step's metric.
// Node (uses the worker pool); must not import vscode or the DOM.

import type { BackendChoice } from '../engine/wasm/select';
import type { Curve, MetricName, Setting } from './evaluate';
import { goldenSection, nelderMead, projectedGradient } from './optimise';
import { TunePool } from './pool';
import type { Problem } from './problem';

export interface FreeName {
  readonly name: string;
  readonly lo: number;
  readonly hi: number;
  /** Declared value (clamped into the range): where Nelder–Mead starts. */
  readonly value: number;
}

export interface FitOptions {
  readonly free: readonly FreeName[];
  readonly steps: number;
  readonly metric: MetricName;
  readonly workers: number;
  readonly maxEvaluations?: number;
  readonly dtype?: 'float32' | 'float64';
  readonly backend?: BackendChoice;
  readonly onEvaluation?: (count: number) => void;
  /** Aborting stops the fit: the pool's workers are terminated and runFit rejects with a FitCancelled. */
  readonly signal?: AbortSignal;
  /**
   * 'derivative-free' (default): golden-section or Nelder–Mead, for any scheme, smooth or not. 'gradient': projected
   * gradient with the exact derivatives of the engine's sensitivity mode, for schemes smooth in the free names.
   */
  readonly method?: 'derivative-free' | 'gradient';
}

/** The rejection of a fit whose signal was aborted. */
export class FitCancelled extends Error {
  constructor() {
    super('the fit was cancelled');
  }
}

/** What a fit needs of a tuning problem: the scheme's text and the noisy and clean pictures. */
export type FitProblem = Pick<Problem, 'source' | 'image' | 'reference' | 'fieldImages'>;

export interface FitResult {
  readonly method: 'golden-section' | 'nelder-mead' | 'projected-gradient';
  readonly values: Setting;
  readonly step: number;
  readonly best: number;
  /** Metric of the noisy input (step 0), the baseline any useful setting must beat. */
  readonly noisy: number;
  readonly evaluations: number;
  /**
   * Engine runs, counted in plain-run equivalents: a derivative-free evaluation is 1; an evaluation with P tangents
   * (the gradient method) counts as 1 + P, since its dual kernels do the value's work plus one tangent's per name.
   * That is the nominal count; test/bench/sensitivity.bench.ts prints the measured cost (higher where a tangent goes
   * through a blur: 4.3× to 5.3× a plain run for K and sigma of the edge-preserving example).
   */
  readonly runs: number;
  /** Gradient method only: the projected gradient's largest component at the result (unit-cube coordinates). */
  readonly projectedGradient?: number;
  /** Gradient method only: the names searched in log coordinates. */
  readonly logScale?: readonly string[];
  readonly stop: 'tolerance' | 'max-evaluations';
  /** Every evaluated setting in evaluation order, with its best step and metric. */
  readonly history: { readonly values: Setting; readonly step: number; readonly best: number }[];
  readonly seconds: number;
}

export async function runFit(problem: FitProblem, opts: FitOptions): Promise<FitResult> {
  const t0 = performance.now();
  const signal = opts.signal;
  if (signal?.aborted) throw new FitCancelled();
  const pool = await TunePool.open(opts.workers, {
    source: problem.source, image: problem.image, reference: problem.reference, ...(problem.fieldImages ? { fieldImages: problem.fieldImages } : {}),
    steps: opts.steps, metric: opts.metric, dtype: opts.dtype ?? 'float32', ...(opts.backend ? { backend: opts.backend } : {}),
  });
  const history: FitResult['history'][number][] = [];
  const curves = new Map<string, Curve>();
  const toSetting = (x: number[]): Setting => Object.fromEntries(opts.free.map((f, i) => [f.name, x[i]]));
  // An abort terminates the workers (a long step is not waited for); the evaluation in flight then never settles,
  // so every evaluation races against the abort.
  let rejectAborted: (err: Error) => void = () => undefined;
  const aborted = new Promise<never>((_, reject) => { rejectAborted = reject; });
  aborted.catch(() => undefined);
  const onAbort = () => {
    void pool.close();
    rejectAborted(new FitCancelled());
  };
  signal?.addEventListener('abort', onAbort, { once: true });
  const objective = async (points: number[][]): Promise<number[]> => {
    if (signal?.aborted) throw new FitCancelled();
    const settings = points.map(toSetting);
    const cs = await Promise.race([pool.evaluate(settings), aborted]);
    return cs.map((c, i) => {
      history.push({ values: settings[i], step: c.bestStep, best: c.best });
      curves.set(JSON.stringify(points[i]), c);
      opts.onEvaluation?.(history.length);
      // Maximise the metric: minimise its negative; a run with no value at all is the worst.
      return c.bestStep < 0 ? Number.POSITIVE_INFINITY : -c.best;
    });
  };
  try {
    if (signal?.aborted) throw new FitCancelled();
    const f = opts.free;
    const maxEvaluations = opts.maxEvaluations ?? 60;
    if (opts.method === 'gradient') {
      const names = f.map((v) => v.name);
      // A positive range spanning a decade or more (contrast thresholds such as K in [0.005, 0.5]) is searched in
      // log coordinates z = ln x: the box stays a box, the gradient becomes x·∂f/∂x, and the curvature along such a
      // name no longer dwarfs the others' (measured on the edge-preserving example: see docs/sensitivities.md).
      const logScale = f.map((v) => v.lo > 0 && v.hi / v.lo >= 10);
      const fromZ = (z: number[]) => z.map((v, i) => (logScale[i] ? Math.min(f[i].hi, Math.max(f[i].lo, Math.exp(v))) : v));
      const gradObjective = async (zs: number[][]) => {
        if (signal?.aborted) throw new FitCancelled();
        const points = zs.map(fromZ);
        const settings = points.map(toSetting);
        const cs = await Promise.race([pool.evaluate(settings, undefined, names), aborted]);
        return cs.map((c, i) => {
          history.push({ values: settings[i], step: c.bestStep, best: c.best });
          curves.set(JSON.stringify(points[i]), c);
          opts.onEvaluation?.(history.length);
          if (c.bestStep < 0) return { f: Number.POSITIVE_INFINITY, g: names.map(() => 0) };
          // Maximise the metric: minimise its negative, whose gradient is minus the metric's.
          return { f: -c.best, g: Array.from(c.gradient as Float64Array, (v, k) => -v * (logScale[k] ? points[i][k] : 1)) };
        });
      };
      const toZ = (x: number, i: number) => (logScale[i] ? Math.log(x) : x);
      const r = await projectedGradient(gradObjective, { lo: f.map((v, i) => toZ(v.lo, i)), hi: f.map((v, i) => toZ(v.hi, i)) }, {
        start: f.map((v, i) => toZ(v.value, i)), maxEvaluations, gTolerance: opts.metric === 'psnr' ? 1e-3 : 1e-5, xTolerance: 1e-4,
      });
      const x = fromZ(r.x);
      const curve = curves.get(JSON.stringify(x)) as Curve;
      return {
        method: 'projected-gradient', values: toSetting(x), logScale: names.filter((_, i) => logScale[i]), step: curve.bestStep, best: curve.best, noisy: curve.values[0],
        evaluations: r.evaluations, runs: r.evaluations * (1 + names.length), projectedGradient: r.projectedGradient,
        stop: r.stop, history, seconds: (performance.now() - t0) / 1000,
      };
    }
    const r = f.length === 1
      ? await goldenSection(objective, f[0].lo, f[0].hi, { xTolerance: 2e-3, maxEvaluations })
      : await nelderMead(objective, { lo: f.map((v) => v.lo), hi: f.map((v) => v.hi) }, { start: f.map((v) => v.value), xTolerance: 2e-3, fTolerance: opts.metric === 'psnr' ? 1e-4 : 1e-6, maxEvaluations });
    const curve = curves.get(JSON.stringify(r.x)) as Curve;
    return {
      method: f.length === 1 ? 'golden-section' : 'nelder-mead',
      values: toSetting(r.x),
      step: curve.bestStep,
      best: curve.best,
      noisy: curve.values[0],
      evaluations: r.evaluations,
      runs: r.evaluations,
      stop: r.stop,
      history,
      seconds: (performance.now() - t0) / 1000,
    };
  } finally {
    signal?.removeEventListener('abort', onAbort);
    await pool.close();
  }
}
