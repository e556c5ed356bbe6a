// One tuning evaluation: run a scheme with one setting (parameter values, dt) and measure PSNR or SSIM of the
// picture field against the clean reference after every step. The unit of work of sweeps, fits and their workers.
// Imports the engine and the metrics only; must not import Node modules, vscode or the DOM (it runs in workers).

import { metricSensitivities } from '../analysis/metricGradients';
import { psnr, ssim, SSIM_WINDOW, type MetricImage } from '../analysis/metrics';
import { createRun, middleRow, type RunImage, type RunOptions } from '../engine';
import type { CheckedScheme } from '../notation/scheme';

export type MetricName = 'psnr' | 'ssim';
export const METRICS: readonly MetricName[] = ['psnr', 'ssim'];

/** Parameter values by name; the name `dt` sets the step size. */
export type Setting = Readonly<Record<string, number>>;

export interface Curve {
  /** Metric at steps 0..steps (index = step); NaN after a blow-up. */
  readonly values: Float64Array;
  /** The step with the largest metric (earliest on ties), -1 when no step has a number. */
  readonly bestStep: number;
  readonly best: number;
  readonly status: 'done' | 'blow-up';
  /**
   * With gradient names (evaluateSettingWithGradient): d(metric at the best step)/d(name), one entry per name, in
   * their order. By Danskin's theorem this is the gradient of the best-step score wherever that step is the only
   * best one; 0 when the best step is 0 (the input does not depend on the names); NaN entries when no step has a value.
   */
  readonly gradient?: Float64Array;
}

export interface EvaluationTask {
  readonly image: RunImage;
  /** The picture of each `image` field by name (named inputs, channels); see the engine's RunOptions. */
  readonly fieldImages?: Readonly<Record<string, RunImage>>;
  readonly reference: RunImage;
  readonly steps: number;
  readonly metric: MetricName;
  readonly dtype?: 'float32' | 'float64';
}

/** The field a metric is measured on: the first `image` field, else the first updated field (as in `fluxel run`). */
export function pictureField(scheme: CheckedScheme): number {
  const img = scheme.fields.findIndex((f) => f.init.kind === 'image');
  return img >= 0 ? img : Math.max(0, scheme.fields.findIndex((f) => f.updated));
}

/** The reference a run is measured against: in 1d the engine runs on the picture's middle row, so that row. */
export function referenceFor(scheme: CheckedScheme, reference: RunImage): RunImage {
  return scheme.dims === 1 && reference.height > 1 ? middleRow(reference) : reference;
}

/** A metric function with the reference converted to Float64 once. Throws for SSIM on images under 11×11. */
export function metricAgainst(reference: RunImage, metric: MetricName): (data: Float32Array | Float64Array) => number {
  const ref: MetricImage = { width: reference.width, height: reference.height, data: Float64Array.from(reference.data) };
  if (metric === 'ssim' && (ref.width < SSIM_WINDOW || ref.height < SSIM_WINDOW)) {
    throw new Error(`SSIM needs at least ${SSIM_WINDOW}×${SSIM_WINDOW} pixels; the image is ${ref.width}×${ref.height}. Use --metric psnr or a larger image.`);
  }
  const f = metric === 'psnr' ? psnr : ssim;
  return (data) => f(ref, { width: ref.width, height: ref.height, data });
}

/** Index and value of the largest number in `values`, earliest on ties; NaN entries are skipped. */
export function argBest(values: ArrayLike<number>): { step: number; value: number } {
  let step = -1;
  let value = Number.NaN;
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (v === v && (step < 0 || v > value)) {
      step = i;
      value = v;
    }
  }
  return { step, value };
}

/** The run of one setting: its params and dt, the task's pictures (every image field's), steps and dtype. */
function runOf(scheme: CheckedScheme, task: EvaluationTask, setting: Setting, extra: Partial<RunOptions> = {}): ReturnType<typeof createRun> {
  const params: Record<string, number> = {};
  let dt: number | undefined;
  for (const [name, v] of Object.entries(setting)) {
    if (name === 'dt') dt = v;
    else params[name] = v;
  }
  return createRun(scheme, { image: task.image, fieldImages: task.fieldImages ?? null, params, dt, steps: task.steps, dtype: task.dtype ?? 'float32', ...extra });
}

/** Runs one setting and returns the metric curve over every step (step 0 is the noisy input itself). */
export function evaluateSetting(scheme: CheckedScheme, task: EvaluationTask, setting: Setting): Curve {
  const run = runOf(scheme, task, setting);
  const k = pictureField(scheme);
  const measure = metricAgainst(referenceFor(scheme, task.reference), task.metric);
  const values = new Float64Array(task.steps + 1).fill(Number.NaN);
  values[0] = measure(run.fieldData(k));
  let status: Curve['status'] = 'done';
  for (let s = 1; s <= task.steps; s++) {
    run.step();
    if (run.status === 'blow-up') {
      status = 'blow-up';
      break;
    }
    values[s] = measure(run.fieldData(k));
  }
  const b = argBest(values);
  return { values, bestStep: b.step, best: b.value, status };
}

/**
 * Like evaluateSetting, in the engine's sensitivity mode: the run carries one tangent per name (params or dt), and
 * the curve gets the exact derivative of the metric at its best step. The tangents of the best step so far are kept
 * (copied when a new best appears), so the derivative needs no second run.
 */
export function evaluateSettingWithGradient(scheme: CheckedScheme, task: EvaluationTask, setting: Setting, names: readonly string[]): Curve {
  // No new-extremum monitor: an evaluation reads no warnings (a blow-up stops it either way), so the static analysis
  // that decides the monitor would be spent for nothing on every evaluation.
  const run = runOf(scheme, task, setting, { sensitivity: names, monitors: { extremumCheck: false } });
  const k = pictureField(scheme);
  const reference = referenceFor(scheme, task.reference);
  const measure = metricAgainst(reference, task.metric);
  const values = new Float64Array(task.steps + 1).fill(Number.NaN);
  let data = run.fieldData(k);
  values[0] = measure(data);
  let best: { step: number; value: number; data: ArrayLike<number>; tangents: ArrayLike<number>[] } = { step: values[0] === values[0] ? 0 : -1, value: values[0], data, tangents: names.map(() => new Float64Array(data.length)) };
  let status: Curve['status'] = 'done';
  for (let s = 1; s <= task.steps; s++) {
    run.step();
    if (run.status === 'blow-up') {
      status = 'blow-up';
      break;
    }
    data = run.fieldData(k);
    const v = measure(data);
    values[s] = v;
    // The same rule as argBest: the earliest of equal values wins, NaN never does.
    if (v === v && (best.step < 0 || v > best.value)) best = { step: s, value: v, data, tangents: names.map(n => run.sensitivityData(k, n)) };
  }
  const gradient = new Float64Array(names.length).fill(Number.NaN);
  if (best.step >= 0) {
    const ref = { width: reference.width, height: reference.height, data: Float64Array.from(reference.data) };
    const img = { width: reference.width, height: reference.height, data: Float64Array.from(best.data) };
    const d = metricSensitivities(ref, img, best.tangents, task.metric === 'ssim');
    d.forEach((m, j) => (gradient[j] = task.metric === 'ssim' ? (m.ssim as number) : m.psnr));
  }
  return { values, bestStep: best.step, best: best.value, status, gradient };
}

/** The `best` entry of `fluxel run --stats`: the step maximising the chosen metric, with PSNR beside it. */
export interface BestStep {
  readonly step: number;
  readonly psnr: number;
  readonly ssim?: number;
  readonly metric: MetricName;
}

/**
 * Follows a run step by step and keeps the step with the largest metric (earliest on ties); step 0 is
 * measured at once. `measure(step)` must be called after each step; NaN values (a blow-up) never win.
 */
export function bestStepTracker(reference: RunImage, metric: MetricName, field: number, run: { readonly scheme: CheckedScheme; fieldData(k: number): Float32Array | Float64Array }) {
  const ref = referenceFor(run.scheme, reference);
  const score = metricAgainst(ref, metric);
  const psnrOf = metric === 'psnr' ? score : metricAgainst(ref, 'psnr');
  let best: BestStep | null = null;
  let bestValue = Number.NaN;
  const measure = (step: number) => {
    const data = run.fieldData(field);
    const v = score(data);
    if (v === v && (best === null || v > bestValue)) {
      bestValue = v;
      best = metric === 'psnr' ? { step, psnr: v, metric } : { step, psnr: psnrOf(data), ssim: v, metric };
    }
  };
  measure(0);
  return { measure, best: (): BestStep | null => best };
}
