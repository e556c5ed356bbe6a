// `fluxel kernel FILE --at X,Y [...]`: the weights pixel (X, Y) is updated with at step N (the engine advances
// the full-resolution state N steps, then src/analysis/kernel.ts differentiates one update), printed as a grid by
// offset with their sum and centre; for linear schemes also the N-step impulse response against √(2t).
// `--influence N`: the influence map of that pixel N steps later (src/analysis/influence.ts, an adjoint sweep
// along the recorded trajectory): how much each pixel of the state at step S changes the pixel's value at S + N.
// Node-only front end over src/engine, src/analysis, src/images and src/notation; must not import vscode.

import { impulseResponse, kernelAt, type ImpulseResponse, type KernelWeights } from '../analysis/kernel';
import { influenceMap, type InfluenceMap } from '../analysis/influence';
import { createRun, EngineError, recordTrajectory, type RunImage } from '../engine';
import type { CheckedScheme } from '../notation/scheme';
import { guard, parseCommandLine, UsageError, sizeArg, wholeArg } from './args';
import { inputFailure, loadInputs, type LoadedInputs } from './inputs';
import { loadScheme } from './check';

const USAGE = [
  'usage: fluxel kernel FILE --at X,Y [--input PATH [--range LO:HI] | --scene NAME [--noise SIGMA] [--seed N]] [--size WxH]',
  '                     [--input NAME=PATH|NAME=scene:SCENE [--range NAME=LO:HI] ...]',
  '                     [--step N] [--field NAME] [--linearised] [--influence N] [--json]',
  '  The weights of FIELD\' at pixel (X, Y) after N steps (default 0), with diffusivities frozen at that state',
  '  (--linearised: differentiated too). Without --input or --scene, image fields use the survey scene.',
  '  In 1d give --at X; an image contributes its middle row. The state is stepped in Float64.',
  '  Linear schemes also get their impulse response after N steps (the declared `steps` when N is 0).',
  '  --influence N: which pixels of the state at step S (--step) influence FIELD at (X, Y) at step S + N, and how',
  '  much: the pixel\'s row of the product of the N frozen-weight matrices (--linearised: exact derivatives).',
].join('\n');

const OPTIONS = {
  at: { type: 'string' },
  input: { type: 'string', multiple: true },
  range: { type: 'string', multiple: true },
  scene: { type: 'string' },
  noise: { type: 'string' },
  seed: { type: 'string' },
  size: { type: 'string' },
  step: { type: 'string' },
  field: { type: 'string' },
  linearised: { type: 'boolean' },
  linearized: { type: 'boolean' },
  influence: { type: 'string' },
  json: { type: 'boolean' },
  help: { type: 'boolean', short: 'h' },
} as const;

const whole = (text: string, what: string, min: number): number => wholeArg(text, what, min, USAGE);

/** Six significant digits, trailing zeros dropped; −0 printed as 0. */
function fmt(v: number): string {
  if (Object.is(v, -0) || v === 0) return '0';
  return Number(v.toPrecision(6)).toString();
}

/** The result of the command, also its JSON form. */
export interface KernelReport {
  readonly file: string;
  readonly input: string | null;
  readonly field: string;
  readonly at: { readonly x: number; readonly y: number };
  readonly step: number;
  readonly t: number;
  readonly linearised: boolean;
  readonly weights: KernelWeights;
  readonly impulse: ImpulseResponse | null;
  readonly influence?: InfluenceMap | null;
}

/** The box of non-zero influence (clipped to 15×15 around the pixel for text). */
function influenceWindow(m: InfluenceMap, clip: number | null): { x0: number; y0: number; x1: number; y1: number } | null {
  if (!m.box) return null;
  let { x0, y0, x1, y1 } = m.box;
  if (clip !== null) {
    x0 = Math.max(x0, m.x - clip); x1 = Math.min(x1, m.x + clip);
    y0 = Math.max(y0, m.y - clip); y1 = Math.min(y1, m.y + clip);
  }
  return { x0, y0, x1, y1 };
}

function influenceText(m: InfluenceMap): string[] {
  const lines = [
    `influence on ${m.field} at (${m.x}, ${m.y}), ${m.steps} step${m.steps === 1 ? '' : 's'} after the state shown ` +
      `(${m.mode === 'full' ? 'exact derivatives' : 'frozen weights'}): sum ${fmt(m.sum)}, largest |weight| ${fmt(m.maxAbs)}` +
      (m.box ? `, non-zero over x ${m.box.x0}..${m.box.x1}, y ${m.box.y0}..${m.box.y1}` : ''),
  ];
  const w = influenceWindow(m, 7);
  if (!w) return lines;
  for (const [name, map] of Object.entries(m.maps)) {
    if (!map.some((v) => v !== 0)) continue;
    lines.push(`  ${name} (rows y ${w.y0}..${w.y1}, columns x ${w.x0}..${w.x1}${m.box && (w.x0 !== m.box.x0 || w.x1 !== m.box.x1 || w.y0 !== m.box.y0 || w.y1 !== m.box.y1) ? '; clipped to 7 pixels around the pick, --json has all' : ''}):`);
    for (let y = w.y0; y <= w.y1; y++) {
      const row: string[] = [];
      for (let x = w.x0; x <= w.x1; x++) row.push(fmt(map[y * m.width + x]).padStart(11));
      lines.push(`  ${row.join(' ')}`);
    }
  }
  return lines;
}

function minimum(a: ArrayLike<number>): number {
  let m = Infinity;
  for (let k = 0; k < a.length; k++) if (a[k] < m) m = a[k];
  return m;
}

/** Grid lines: a header of dx offsets, then one row per dy (y grows downwards, like image rows). */
export function formatWeightGrid(k: KernelWeights, dims: 1 | 2): string[] {
  const r = k.radius;
  const size = 2 * r + 1;
  const cells: string[][] = [];
  for (let j = 0; j < (dims === 2 ? size : 1); j++) {
    const row: string[] = [];
    for (let i = 0; i < size; i++) row.push(fmt(k.grid[j * size + i]));
    cells.push(row);
  }
  const headers = Array.from({ length: size }, (_, i) => `dx=${i - r}`);
  const width = Math.max(...cells.flat().map((c) => c.length), ...headers.map((h) => h.length));
  const label = dims === 2 ? 'dy=' + String(-r) : '';
  const lw = Math.max(label.length, dims === 2 ? `dy=${r}`.length : 0, 5);
  const lines = [`${''.padEnd(lw)}  ${headers.map((h) => h.padStart(width)).join('  ')}`];
  cells.forEach((row, j) => {
    const l = dims === 2 ? `dy=${j - r}` : '';
    lines.push(`${l.padEnd(lw)}  ${row.map((c) => c.padStart(width)).join('  ')}`);
  });
  return lines;
}

function textReport(rep: KernelReport, scheme: CheckedScheme): string {
  const k = rep.weights;
  const where = scheme.dims === 2 ? `pixel (${rep.at.x}, ${rep.at.y})` : `cell ${rep.at.x}`;
  const lines = [
    `${rep.file}: weights of ${rep.field}' at ${where}, step ${rep.step} (t = ${fmt(rep.t)}), ` +
      `${rep.linearised ? 'full linearisation (diffusivities differentiated)' : 'diffusivities frozen at the state'}` +
      `${rep.input ? `, input ${rep.input}` : ''}`,
    `offsets: x to the right, y downwards; new ${rep.field} = ${fmt(k.value)}`,
    ...formatWeightGrid(k, scheme.dims),
  ];
  const others = k.entries.filter((e) => e.field !== k.field);
  if (others.length) {
    lines.push('weights on other fields:');
    for (const e of others) lines.push(`  ${e.field}[${e.offset.join(',')}]  ${fmt(e.weight)}`);
  }
  lines.push(`sum of weights ${fmt(k.sum)}; centre weight ${fmt(k.centre)}`);
  if (k.negativeCentre) {
    lines.push(`warning: the centre weight is negative (${fmt(k.centre)}): the update overshoots and can create new extrema here.`);
  }
  const ir = rep.impulse;
  if (ir) {
    const axes = scheme.dims === 2 ? ['x', 'y'] : ['x'];
    const drift = ir.mean.some((m) => Math.abs(m) > 1e-9);
    lines.push(
      `impulse response of the linear scheme after ${ir.steps} step${ir.steps === 1 ? '' : 's'} (t = ${fmt(ir.t)}): ` +
        `mass ${fmt(ir.sum)}, ` +
        (drift ? `centre of mass moved by (${ir.mean.map(fmt).join(', ')}) cells, ` : '') +
        axes.map((a, i) => `variance ${a} ${fmt(ir.variance[i])}`).join(', ') + ' (cells²)',
    );
    lines.push(
      `  equivalent Gaussian σ ${axes.map((a, i) => `${a} ${fmt(ir.sigma[i])}`).join(', ')} vs √(2t) = ${fmt(ir.heatSigma)}` +
        ` (the width of the heat kernel for u_t = Δu)${ir.truncated ? '; the response was cut at the grid edge' : ''}`,
    );
    const least = minimum(ir.grid);
    // A response with negative lobes (waves, sharpening) is no smoothing kernel: its σ is only a second moment.
    if (least < -1e-12 * Math.max(1, Math.abs(ir.sum))) {
      lines.push(`  the response has negative values (minimum ${fmt(least)}): it is not a smoothing kernel, so σ is only its second moment`);
    }
  }
  if (rep.influence) lines.push(...influenceText(rep.influence));
  return lines.join('\n');
}

function jsonReport(rep: KernelReport, scheme: CheckedScheme): Record<string, unknown> {
  const k = rep.weights;
  const size = 2 * k.radius + 1;
  const rows: number[][] = [];
  for (let j = 0; j < (scheme.dims === 2 ? size : 1); j++) rows.push(Array.from(k.grid.subarray(j * size, (j + 1) * size)));
  const ir = rep.impulse;
  return {
    file: rep.file,
    input: rep.input,
    field: rep.field,
    at: rep.at,
    step: rep.step,
    t: rep.t,
    linearised: rep.linearised,
    value: k.value,
    radius: k.radius,
    weights: rows,
    entries: k.entries,
    sum: k.sum,
    centre: k.centre,
    negativeCentre: k.negativeCentre,
    ...(ir ? {
      impulse: {
        steps: ir.steps, t: ir.t, sum: ir.sum, min: minimum(ir.grid), mean: ir.mean, variance: ir.variance, sigma: ir.sigma,
        heatSigma: ir.heatSigma, truncated: ir.truncated,
      },
    } : {}),
    ...(rep.influence ? { influence: influenceJson(rep.influence) } : {}),
  };
}

function influenceJson(m: InfluenceMap): Record<string, unknown> {
  const w = influenceWindow(m, null);
  const maps: Record<string, number[][]> = {};
  if (w) {
    for (const [name, map] of Object.entries(m.maps)) {
      const rows: number[][] = [];
      for (let y = w.y0; y <= w.y1; y++) rows.push(Array.from(map.subarray(y * m.width + w.x0, y * m.width + w.x1 + 1)));
      maps[name] = rows;
    }
  }
  return { steps: m.steps, mode: m.mode, field: m.field, at: { x: m.x, y: m.y }, sum: m.sum, maxAbs: m.maxAbs, box: m.box, evaluations: m.evaluations, maps };
}

export function kernelMain(argv: string[]): Promise<number> {
  return guard('kernel', async () => {
    const { values: o, positionals } = parseCommandLine(argv, OPTIONS, USAGE);
    if (o.help) {
      process.stdout.write(USAGE + '\n');
      return 0;
    }
    if (positionals.length !== 1) throw new UsageError(`expected one FILE.\n${USAGE}`);
    const file = positionals[0];
    if (o.at === undefined) throw new UsageError(`--at X,Y is required.\n${USAGE}`);
    const atMatch = /^\s*(-?\d+)\s*(?:,\s*(-?\d+)\s*)?$/.exec(o.at);
    if (!atMatch) throw new UsageError(`--at takes X,Y (whole numbers, e.g. 12,40), got '${o.at}'.\n${USAGE}`);
    const step = o.step === undefined ? 0 : whole(o.step, '--step', 0);
    const influenceSteps = o.influence === undefined ? null : whole(o.influence, '--influence', 1);
    const linearised = (o.linearised ?? false) || (o.linearized ?? false);
    const size = sizeArg(o.size, USAGE);

    const loaded = await loadScheme('kernel', file);
    if (!loaded) return 1;
    const { scheme } = loaded;
    const field = o.field ?? scheme.updates[0]?.field;
    if (field === undefined) {
      process.stderr.write(`fluxel kernel: ${file}: the scheme has no update, so no pixel has weights.\n`);
      return 1;
    }
    if (!scheme.updates.some((u) => u.field === field)) {
      throw new UsageError(`--field ${field}: the scheme has no update of '${field}' (updated: ${scheme.updates.map((u) => u.field).join(', ')}).`);
    }
    const x = Number(atMatch[1]);
    const y = atMatch[2] === undefined ? 0 : Number(atMatch[2]);
    if (scheme.dims === 1 && y !== 0) throw new UsageError(`--at: a 1d scheme has one row; give --at X (or X,0), got '${o.at}'.`);
    if (scheme.dims === 2 && atMatch[2] === undefined) throw new UsageError(`--at: a 2d scheme needs both coordinates, --at X,Y, got '${o.at}'.`);

    // The pictures, as `fluxel run` takes them: a file, a named scene (its noisy version), or the survey scene; named inputs.
    let inputs: LoadedInputs;
    try {
      inputs = await loadInputs(scheme, { input: o.input, range: o.range, scene: o.scene, noise: o.noise, seed: o.seed, size }, USAGE);
    } catch (err) {
      if (err instanceof UsageError) throw err;
      return inputFailure('kernel', file, err);
    }
    const image: RunImage | null = inputs.image;
    const inputName = inputs.label;
    // A 1d scheme runs on the image's middle row: the engine picks it (middleRow), the same row as the analysis.

    let run;
    try {
      run = createRun(scheme, {
        image, fieldImages: inputs.fieldImages, steps: step, dtype: 'float64',
        width: image ? undefined : size?.width, height: image ? undefined : scheme.dims === 1 ? 1 : size?.height,
      });
    } catch (err) {
      if (err instanceof EngineError) {
        process.stderr.write(`fluxel kernel: ${file}: ${err.message}\n`);
        return 1;
      }
      throw err;
    }
    const { width, height } = run.geometry;
    if (x < 0 || x >= width || y < 0 || y >= height) {
      const dims = scheme.dims === 2 ? `${width}×${height} image (x in 0..${width - 1}, y in 0..${height - 1})` : `row of ${width} cells (x in 0..${width - 1})`;
      throw new UsageError(`--at ${o.at} is outside the ${dims}.`);
    }
    const result = run.runSync();
    if (result.status === 'blow-up') {
      process.stderr.write(`fluxel kernel: ${file}: the state blew up at step ${result.stepsDone}, before step ${step}; no weights to show.\n`);
      return 1;
    }
    const state = { width, height, t: run.t, fields: scheme.fields.map((_, k) => run.fieldData(k)) };
    const weights = kernelAt(scheme, state, x, y, { linearised, field });
    // The impulse response needs a number of steps: --step when given, else the scheme's declared `steps`.
    const irSteps = step > 0 ? step : Math.max(1, scheme.steps);
    const impulse = impulseResponse(scheme, irSteps, { field });
    let influence: InfluenceMap | null = null;
    if (influenceSteps !== null) {
      try {
        const traj = recordTrajectory(scheme, influenceSteps, { image, fieldImages: inputs.fieldImages, width: image ? undefined : size?.width, height: image ? undefined : scheme.dims === 1 ? 1 : size?.height }, undefined, step);
        if (traj.states.length < influenceSteps) {
          process.stderr.write(`fluxel kernel: ${file}: the run stopped after ${step + traj.states.length} steps, before step ${step + influenceSteps}.\n`);
          return 1;
        }
        influence = influenceMap(scheme, traj.states, { x, y, field }, { mode: linearised ? 'full' : 'frozen' });
      } catch (err) {
        if (err instanceof EngineError) {
          process.stderr.write(`fluxel kernel: ${file}: ${err.message}\n`);
          return 1;
        }
        throw err;
      }
    }
    const rep: KernelReport = { file, input: inputName, field, at: { x, y }, step, t: run.t, linearised, weights, impulse, influence };
    if (o.json) process.stdout.write(JSON.stringify(jsonReport(rep, scheme), null, 2) + '\n');
    else process.stdout.write(textReport(rep, scheme) + '\n');
    return 0;
  });
}
