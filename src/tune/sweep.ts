// A parameter sweep: every setting of a grid (one or two varied names) run on the worker pool with the metric
// recorded at every step, and the three outputs made from it: CSV rows, a JSON summary and the heat-map spec.
// Node (uses the pool); must not import vscode or the DOM.

import type { Axis } from './grid';
import { expandGrid } from './grid';
import type { Curve, MetricName, Setting } from './evaluate';
import type { HeatmapSpec } from './heatmap';
import { TunePool } from './pool';
import type { Problem } from './problem';

export interface SweepOptions {
  readonly axes: readonly Axis[];
  readonly steps: number;
  readonly metric: MetricName;
  readonly workers: number;
  readonly dtype?: 'float32' | 'float64';
  readonly onResult?: (done: number, total: number) => void;
}

export interface SweepResult {
  readonly settings: Setting[];
  readonly curves: Curve[];
  /** Index of the best setting (largest metric at its best step; first on ties), -1 if every run blew up. */
  readonly bestIndex: number;
  readonly seconds: number;
}

export async function runSweep(problem: Problem, opts: SweepOptions): Promise<SweepResult> {
  const settings = expandGrid(opts.axes);
  const t0 = performance.now();
  const pool = await TunePool.open(Math.min(opts.workers, settings.length), {
    source: problem.source, image: problem.image, reference: problem.reference, ...(problem.fieldImages ? { fieldImages: problem.fieldImages } : {}),
    steps: opts.steps, metric: opts.metric, dtype: opts.dtype ?? 'float32',
  });
  let done = 0;
  let curves: Curve[];
  try {
    curves = await pool.evaluate(settings, () => opts.onResult?.(++done, settings.length));
  } finally {
    await pool.close();
  }
  let bestIndex = -1;
  curves.forEach((c, i) => {
    if (c.bestStep >= 0 && (bestIndex < 0 || c.best > curves[bestIndex].best)) bestIndex = i;
  });
  return { settings, curves, bestIndex, seconds: (performance.now() - t0) / 1000 };
}

const cell = (v: number) => (Number.isNaN(v) ? 'nan' : v === Infinity ? 'inf' : v === -Infinity ? '-inf' : String(v));

/** One row per setting and step: setting index, the varied values, step, metric. */
export function sweepCsv(axes: readonly Axis[], metric: MetricName, r: SweepResult): string {
  const lines = [['setting', ...axes.map((a) => a.name), 'step', metric].join(',')];
  r.settings.forEach((s, i) => {
    const head = [String(i), ...axes.map((a) => cell(s[a.name]))].join(',');
    const values = r.curves[i].values;
    for (let step = 0; step < values.length; step++) lines.push(`${head},${step},${cell(values[step])}`);
  });
  return lines.join('\n') + '\n';
}

/** The values the sweep holds fixed: declared parameters not varied, and dt. */
export function fixedSettings(problem: Problem, axes: readonly Axis[]): Record<string, number> {
  const varied = new Set(axes.map((a) => a.name));
  const out: Record<string, number> = {};
  for (const p of problem.scheme.params) if (!varied.has(p.name)) out[p.name] = p.value;
  if (!varied.has('dt')) out.dt = problem.scheme.dt;
  return out;
}

export function sweepSummary(problem: Problem, opts: SweepOptions, r: SweepResult, files: Record<string, string>) {
  const best = r.bestIndex >= 0 ? r.curves[r.bestIndex] : null;
  return {
    scheme: problem.file,
    sourceHash: problem.sourceHash,
    scene: problem.scene,
    noise: problem.noise,
    seed: problem.seed,
    ...(problem.inputs ? { inputs: problem.inputs } : {}),
    size: { width: problem.image.width, height: problem.image.height },
    steps: opts.steps,
    metric: opts.metric,
    dtype: opts.dtype ?? 'float32',
    workers: opts.workers,
    vary: opts.axes.map((a) => ({ name: a.name, lo: a.lo, hi: a.hi, count: a.count })),
    fixed: fixedSettings(problem, opts.axes),
    noisy: r.curves.length ? r.curves[0].values[0] : null,
    best: best ? { params: r.settings[r.bestIndex], step: best.bestStep, [opts.metric]: best.best } : null,
    settings: r.settings.map((s, i) => ({ params: s, bestStep: r.curves[i].bestStep, best: r.curves[i].best, status: r.curves[i].status })),
    files,
    seconds: r.seconds,
  };
}

function metricLabel(metric: MetricName): string {
  return metric === 'psnr' ? 'PSNR (dB)' : 'SSIM';
}

/**
 * One varied name: rows are its values, columns the steps, cells the metric at that step.
 * Two: columns the first name, rows the second, cells each setting's metric at its own best step.
 */
export function sweepHeatmap(problem: Problem, opts: SweepOptions, r: SweepResult): HeatmapSpec {
  const base = problem.file.split(/[\\/]/).pop() ?? problem.file;
  const title = `${base} on ${problem.scene}, noise ${problem.noise}: ${opts.metric.toUpperCase()} by ${opts.axes.map((a) => a.name).join(' and ')}`;
  const best = r.bestIndex >= 0 ? r.curves[r.bestIndex] : null;
  const bestText = best
    ? `best: ${opts.axes.map((a) => `${a.name} = ${Number(r.settings[r.bestIndex][a.name].toPrecision(4))}`).join(', ')}, step ${best.bestStep}, ${opts.metric.toUpperCase()} ${opts.metric === 'psnr' ? best.best.toFixed(2) + ' dB' : best.best.toFixed(4)} (ring)`
    : 'every run blew up';
  const blew = r.curves.some((c) => c.status === 'blow-up');
  const note = blew ? `${bestText}; grey: no value (blow-up)` : bestText;
  if (opts.axes.length === 1) {
    const a = opts.axes[0];
    const cols = opts.steps + 1;
    const cells = new Float64Array(a.count * cols);
    r.curves.forEach((c, row) => cells.set(c.values, row * cols));
    return {
      title, xLabel: 'step', yLabel: a.name, barLabel: metricLabel(opts.metric),
      xValues: Array.from({ length: cols }, (_, i) => i), yValues: a.values, cells,
      ...(best ? { mark: { col: best.bestStep, row: r.bestIndex } } : {}), note,
    };
  }
  const [ax, ay] = opts.axes;
  const cells = new Float64Array(ax.count * ay.count);
  for (let i = 0; i < ax.count; i++) for (let j = 0; j < ay.count; j++) cells[j * ax.count + i] = r.curves[i * ay.count + j].best;
  return {
    title, xLabel: `${ax.name} (each cell at its best step)`, yLabel: ay.name, barLabel: metricLabel(opts.metric),
    xValues: ax.values, yValues: ay.values, cells,
    ...(best ? { mark: { col: Math.floor(r.bestIndex / ay.count), row: r.bestIndex % ay.count } } : {}), note,
  };
}
