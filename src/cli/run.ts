// `fluxel run FILE ...`: runs a scheme in-process on an image or a generated scene and writes the result,
// optional frames and a --stats JSON document (contracts.md §4). Exit 0 ok, 1 input errors, 2 usage.
// `--baseline OTHER.fluxel` (A/B): runs OTHER on the same input, steps and precision, writes its result beside the
// output as NAME.baseline.EXT and the signed difference (this − baseline) as NAME.diff.pfm, and reports the deltas
// (PSNR, SSIM against the clean scene, total variation, difference RMS/max) on stdout and under `ab` in --stats.
// Node-only front end over src/engine, src/images and src/notation; must not import vscode.

import { createHash } from 'node:crypto';
import { promises as fs } from 'node:fs';
import * as path from 'node:path';
import { formatFromExtension } from '../images/codec';
import { readImageFile, writeFileAtomically, writeImageFile } from '../images/files';
import { makeScene } from '../images/scenes';
import { ImageError, type GreyImage } from '../images/types';
import { parseAndCheck } from '../notation';
import type { SourceRange } from '../notation/ast';
import { createRun, EngineError, type RunImage, type RunWarning } from '../engine';
import { BACKEND_CHOICES, backendByName, type BackendChoice } from '../engine/wasm/select';
import { guard, parseCommandLine, UsageError, numberArg, rangeArg, sizeArg, wholeArg } from './args';
import { formatDiagnostic } from './check';
import { bestStepTracker, pictureField } from '../tune/evaluate';
import { psnr as psnrOf, ssim as ssimOf, totalVariation } from '../analysis/metrics';
import type { CheckedScheme } from '../notation/scheme';

/** NAME.baseline.EXT and NAME.diff.pfm beside the output. */
export function abPaths(output: string): { baseline: string; diff: string } {
  const ext = path.extname(output);
  const stem = output.slice(0, output.length - ext.length);
  return { baseline: `${stem}.baseline${ext}`, diff: `${stem}.diff.pfm` };
}

function outputFieldIndex(scheme: CheckedScheme, name?: string): number {
  if (name !== undefined) return scheme.fields.findIndex(f => f.name === name);
  const imageField = scheme.fields.findIndex(f => f.init.kind === 'image');
  return imageField >= 0 ? imageField : Math.max(0, scheme.fields.findIndex(f => f.updated));
}

const USAGE = [
  'usage: fluxel run FILE [--input PATH [--range LO:HI] | --scene NAME [--noise SIGMA] [--seed N]] [--size WxH]',
  '                  [--set NAME=VALUE ...] [--steps N] [--float64] [--field NAME] [--extremum-check] [--backend js|wasm|auto]',
  '                  --output PATH [--frames DIR --every K] [--stats PATH [--metric psnr|ssim]]',
  '  --set also accepts dt=VALUE; without --input or --scene, image fields use the survey scene.',
  '  With a scene, --stats gets `best`: the step (any step, not only recorded frames) maximising --metric (default psnr).',
  '  --baseline OTHER.fluxel: also run OTHER on the same input; writes NAME.baseline.EXT and NAME.diff.pfm beside',
  '  --output and the deltas (this − baseline) of PSNR, SSIM (with a scene), TV and the difference.',
].join('\n');

const OPTIONS = {
  input: { type: 'string' },
  range: { type: 'string' },
  scene: { type: 'string' },
  noise: { type: 'string' },
  seed: { type: 'string' },
  size: { type: 'string' },
  set: { type: 'string', multiple: true },
  steps: { type: 'string' },
  float64: { type: 'boolean' },
  backend: { type: 'string' },
  field: { type: 'string' },
  'extremum-check': { type: 'boolean' },
  output: { type: 'string', short: 'o' },
  frames: { type: 'string' },
  every: { type: 'string' },
  stats: { type: 'string' },
  metric: { type: 'string' },
  baseline: { type: 'string' },
  help: { type: 'boolean', short: 'h' },
} as const;

const number = (text: string, what: string): number => numberArg(text, what, USAGE);
const whole = (text: string, what: string, min: number): number => wholeArg(text, what, min, USAGE);

const jsonRange = (r: SourceRange) => ({ start: { line: r.start.line, column: r.start.column }, end: { line: r.end.line, column: r.end.column } });

/** The stats file, like the image, replaces an existing file only once complete. */
const writeAtomically = writeFileAtomically;

export function runMain(argv: string[]): Promise<number> {
  return guard('run', async () => {
    const { values: o, positionals } = parseCommandLine(argv, OPTIONS, USAGE);
    if (o.help) {
      process.stdout.write(USAGE + '\n');
      return 0;
    }
    if (positionals.length !== 1) throw new UsageError(`expected one FILE.\n${USAGE}`);
    const file = positionals[0];
    if (!o.output) throw new UsageError(`--output PATH is required.\n${USAGE}`);
    if (formatFromExtension(o.output) === null) throw new UsageError(`cannot tell the output format of ${o.output}; use .png, .pgm, .pfm, .tif or .tiff.`);
    if (o.input && o.scene) throw new UsageError(`give --input or --scene, not both.\n${USAGE}`);
    if ((o.noise !== undefined || o.seed !== undefined) && !o.scene) throw new UsageError(`--noise and --seed go with --scene.\n${USAGE}`);
    if (o.range !== undefined && !o.input) throw new UsageError(`--range goes with --input.\n${USAGE}`);
    if ((o.frames === undefined) !== (o.every === undefined)) throw new UsageError(`--frames DIR and --every K go together.\n${USAGE}`);
    const steps = o.steps === undefined ? undefined : whole(o.steps, '--steps', 0);
    const every = o.every === undefined ? 0 : whole(o.every, '--every', 1);
    const backendChoice = (o.backend ?? 'auto') as BackendChoice;
    if (!BACKEND_CHOICES.includes(backendChoice)) throw new UsageError(`--backend takes js, wasm or auto, got '${o.backend}'.\n${USAGE}`);
    const params: Record<string, number> = {};
    let dt: number | undefined;
    for (const s of o.set ?? []) {
      const eq = s.indexOf('=');
      if (eq <= 0) throw new UsageError(`--set takes NAME=VALUE, got '${s}'.\n${USAGE}`);
      const name = s.slice(0, eq).trim();
      const value = number(s.slice(eq + 1), `--set ${name}`);
      if (name === 'dt') dt = value;
      else params[name] = value;
    }
    const size = sizeArg(o.size, USAGE);
    const range = rangeArg(o.range, USAGE);

    let text: string;
    try {
      text = await fs.readFile(file, 'utf8');
    } catch (err) {
      process.stderr.write(`fluxel run: cannot read ${file}: ${(err as NodeJS.ErrnoException).code ?? String(err)}\n`);
      return 1;
    }
    const checked = parseAndCheck(text);
    const errors = checked.diagnostics.filter(d => d.severity === 'error');
    if (!checked.scheme || errors.length) {
      for (const d of errors) process.stderr.write(formatDiagnostic(file, d) + '\n');
      return 1;
    }
    const scheme = checked.scheme;
    for (const [name, value] of Object.entries(params)) {
      const p = scheme.params.find(q => q.name === name);
      if (!p) {
        throw new UsageError(`--set ${name}: the scheme has no parameter '${name}' (parameters: ${scheme.params.map(q => q.name).join(', ') || 'none'}).`);
      }
      // A declared range is the range the scheme was designed for; running outside it is allowed, but said.
      if (p.lo !== null && p.hi !== null && (value < p.lo || value > p.hi)) {
        process.stderr.write(`fluxel run: note: --set ${name}=${value} lies outside its declared range [${p.lo}, ${p.hi}].\n`);
      }
    }
    if (dt !== undefined && scheme.dtBounds && (dt < scheme.dtBounds.lo || dt > scheme.dtBounds.hi)) {
      process.stderr.write(`fluxel run: note: --set dt=${dt} lies outside its declared range [${scheme.dtBounds.lo}, ${scheme.dtBounds.hi}].\n`);
    }
    if (o.field !== undefined && !scheme.fields.some(f => f.name === o.field)) {
      throw new UsageError(`--field ${o.field}: the scheme has no field '${o.field}'.`);
    }

    // The picture: a file, a named scene (noisy input, clean reference for PSNR), or the default scene when needed.
    let image: RunImage | null = null;
    let reference: RunImage | null = null;
    let inputName: string | null = null;
    let seed: number | undefined;
    const needsImage = scheme.fields.some(f => f.init.kind === 'image');
    try {
      if (o.input) {
        const decoded = await readImageFile(o.input, range ? { range } : {});
        image = decoded.channels[0];
        inputName = o.input;
      } else if (o.scene || needsImage) {
        const name = o.scene ?? 'survey';
        seed = o.seed === undefined ? undefined : whole(o.seed, '--seed', 0);
        const scene = makeScene(name, {
          ...(size ?? {}),
          ...(o.noise !== undefined ? { noise: number(o.noise, '--noise') } : {}),
          ...(seed !== undefined ? { seed } : {}),
        });
        image = scene.noisy;
        reference = scene.clean;
        seed = scene.options.seed;
        inputName = `scene:${scene.name}`;
      }
    } catch (err) {
      if (err instanceof ImageError) {
        process.stderr.write(`fluxel run: ${err.message}\n`);
        return err.code === 'bad-option' && o.scene ? 2 : 1;
      }
      throw err;
    }

    let run;
    try {
      run = createRun(scheme, {
        image, reference, params, dt, steps, every,
        width: size?.width, height: size?.height,
        dtype: o.float64 ? 'float64' : 'float32',
        // `auto` and `wasm` both take the SIMD kernels where the scheme allows; stats.backend says what ran.
        backend: backendByName(backendChoice),
        // SSIM only where a clean reference exists, once per recorded frame (not per step).
        ssim: reference !== null,
        // The analysis decides whether the new-extremum monitor applies (numerics.md, "Monitors"); the flag forces it.
        monitors: { extremumCheck: o['extremum-check'] ? true : 'auto' },
      });
    } catch (err) {
      if (err instanceof EngineError) {
        process.stderr.write(`fluxel run: ${file}: ${err.message}\n`);
        return 1;
      }
      throw err;
    }
    // A/B: the baseline scheme on the same input, steps, precision and backend (its own params and dt).
    let ab: { data: ArrayLike<number>; stepsDone: number; stopReason: string | undefined } | null = null;
    if (o.baseline !== undefined) {
      if (o.baseline === o.output || abPaths(o.output).baseline === o.output) throw new UsageError('--baseline names a scheme file, not the output.');
      let btext: string;
      try {
        btext = await fs.readFile(o.baseline, 'utf8');
      } catch (err) {
        process.stderr.write(`fluxel run: cannot read the baseline ${o.baseline}: ${(err as NodeJS.ErrnoException).code ?? String(err)}\n`);
        return 1;
      }
      const bchecked = parseAndCheck(btext);
      const berrors = bchecked.diagnostics.filter(d => d.severity === 'error');
      if (!bchecked.scheme || berrors.length) {
        for (const d of berrors) process.stderr.write(formatDiagnostic(o.baseline, d) + '\n');
        return 1;
      }
      const bs = bchecked.scheme;
      if (bs.dims !== scheme.dims) {
        process.stderr.write(`fluxel run: the baseline ${o.baseline} is a ${bs.dims}d scheme and ${file} a ${scheme.dims}d one; they cannot be compared.\n`);
        return 1;
      }
      if (o.field !== undefined && !bs.fields.some(f => f.name === o.field)) throw new UsageError(`--field ${o.field}: the baseline has no field '${o.field}'.`);
      try {
        const brun = createRun(bs, {
          image, steps, width: size?.width, height: size?.height,
          dtype: o.float64 ? 'float64' : 'float32', backend: backendByName(backendChoice), measures: false,
        });
        const br = brun.runSync();
        if (br.status === 'blow-up') {
          process.stderr.write(`fluxel run: the baseline ${o.baseline} blew up at step ${br.stepsDone}; no output written.\n`);
          return 1;
        }
        if (brun.geometry.width !== run.geometry.width || brun.geometry.height !== run.geometry.height) {
          process.stderr.write(`fluxel run: the baseline ran on ${brun.geometry.width}×${brun.geometry.height} pixels and ${file} on ${run.geometry.width}×${run.geometry.height}; give both the same input.\n`);
          return 1;
        }
        ab = { data: brun.fieldData(outputFieldIndex(bs, o.field)), stepsDone: br.stepsDone, stopReason: br.stopReason };
      } catch (err) {
        if (err instanceof EngineError) {
          process.stderr.write(`fluxel run: ${o.baseline}: ${err.message}\n`);
          return 1;
        }
        throw err;
      }
    }

    // The output field: --field, else the field holding the picture, else the first updated field.
    const imageField = scheme.fields.findIndex(f => f.init.kind === 'image');
    const outIndex = o.field !== undefined
      ? scheme.fields.findIndex(f => f.name === o.field)
      : imageField >= 0 ? imageField : Math.max(0, scheme.fields.findIndex(f => f.updated));
    const outName = scheme.fields[outIndex].name;
    const ext = path.extname(o.output);
    const grey = (data: ArrayLike<number>): GreyImage => ({ width: run.geometry.width, height: run.geometry.height, data: Float32Array.from(data) });

    const frameWrites: Promise<void>[] = [];
    if (o.frames) await fs.mkdir(o.frames, { recursive: true });
    const printWarning = (w: RunWarning) => process.stderr.write(`${file}:${w.range.start.line}:${w.range.start.column} warning ${w.kind} ${w.message}\n`);

    // A progress bar only on a terminal; pipes and CI logs stay quiet.
    let bar: { update(n: number): void; stop(): void } | null = null;
    if (process.stderr.isTTY && run.steps > 0) {
      const { SingleBar, Presets } = await import('cli-progress');
      const b = new SingleBar({ stream: process.stderr, format: 'fluxel run [{bar}] {value}/{total} steps', hideCursor: true }, Presets.shades_classic);
      b.start(run.steps, 0);
      bar = b;
    }
    // Best step over every step, not only the recorded frames: measured after each step (src/tune/evaluate.ts).
    const metric = (o.metric ?? 'psnr').toLowerCase();
    if (metric !== 'psnr' && metric !== 'ssim') throw new UsageError(`--metric takes psnr or ssim, got '${o.metric}'.\n${USAGE}`);
    const tracker = reference && o.stats && (metric === 'psnr' || (run.geometry.width >= 11 && run.geometry.height >= 11))
      ? bestStepTracker(reference, metric, pictureField(scheme), run) : null;
    const result = await run.run({
      onProgress: step => {
        tracker?.measure(step);
        bar?.update(step);
      },
      onWarning: w => {
        // The bar and the warning lines share stderr: stop the bar so the warning is not overdrawn.
        bar?.stop();
        bar = null;
        printWarning(w);
      },
      onFrame: frame => {
        if (!o.frames) return;
        const view = frame.fields[outName];
        const target = path.join(o.frames, `${outName}-${String(frame.stats.step).padStart(6, '0')}${ext}`);
        frameWrites.push(writeImageFile(target, grey(view.data)));
      },
    });
    bar?.stop();
    if (backendChoice === 'wasm' && result.backend.startsWith('js')) process.stderr.write(`fluxel run: ${file}: ran on ${result.backend}\n`);
    await Promise.all(frameWrites);

    if (o.stats) {
      const stats = {
        scheme: file,
        input: inputName,
        params: result.params,
        dt: result.dt,
        steps: result.steps,
        backend: result.backend,
        dtype: result.dtype,
        stepSeconds: result.stepSeconds,
        frames: result.frames,
        stopReason: result.stopReason,
        ...(result.stopChange !== undefined ? { stopChange: result.stopChange } : {}),
        warnings: result.warnings.map(w => ({ ...w, range: jsonRange(w.range) })),
        ...(tracker?.best() ? { best: tracker.best() } : result.best ? { best: result.best } : {}),
        sourceHash: createHash('sha256').update(text).digest('hex'),
        ...(seed !== undefined ? { seed } : {}),
      };
      // JSON has no Infinity: PSNR of identical images is +∞ (numerics.md), written as the string "inf".
      await writeAtomically(o.stats, JSON.stringify(stats, (_k, v) => (typeof v === 'number' && !Number.isFinite(v) ? (Number.isNaN(v) ? 'nan' : v > 0 ? 'inf' : '-inf') : v), 2) + '\n');
    }
    if (result.status === 'blow-up') {
      process.stderr.write(`fluxel run: ${file}: the run blew up; no output written.\n`);
      return 1;
    }
    await writeImageFile(o.output, grey(run.fieldData(outIndex)));
    if (ab) {
      const paths = abPaths(o.output);
      await writeImageFile(paths.baseline, grey(ab.data));
      const mine = run.fieldData(outIndex);
      const diff = new Float32Array(mine.length);
      for (let k = 0; k < diff.length; k++) diff[k] = mine[k] - ab.data[k];
      await writeImageFile(paths.diff, { width: run.geometry.width, height: run.geometry.height, data: diff });
      const w = run.geometry.width, h = run.geometry.height;
      const img = (d: ArrayLike<number>) => ({ width: w, height: h, data: Float64Array.from(d) });
      const measures = (d: ArrayLike<number>) => {
        const m: Record<string, number> = { tv: totalVariation(img(d)) };
        if (reference) {
          m.psnr = psnrOf(img(reference.data), img(d));
          if (w >= 11 && h >= 11) m.ssim = ssimOf(img(reference.data), img(d));
        }
        return m;
      };
      const a = measures(mine), b = measures(ab.data);
      let s2 = 0, mx = 0;
      for (let k = 0; k < diff.length; k++) { s2 += diff[k] * diff[k]; mx = Math.max(mx, Math.abs(diff[k])); }
      const deltas: Record<string, number> = {};
      for (const k of Object.keys(a)) deltas[k] = a[k] - b[k];
      const report = {
        baseline: o.baseline, baselineOutput: paths.baseline, differenceOutput: paths.diff,
        current: a, baselineMeasures: b, deltas, difference: { rms: Math.sqrt(s2 / diff.length), max: mx },
        baselineStepsDone: ab.stepsDone, baselineStopReason: ab.stopReason,
      };
      const f = (v: number) => (Number.isFinite(v) ? Number(v.toPrecision(5)).toString() : String(v));
      const line = (k: string, label: string) => (k in a ? `  ${label.padEnd(4)} ${f(a[k]).padStart(10)}  baseline ${f(b[k]).padStart(10)}  Δ ${f(deltas[k])}\n` : '');
      process.stdout.write(`A/B: ${file} against baseline ${o.baseline}${reference ? ' (PSNR and SSIM against the clean scene)' : ''}\n` +
        line('psnr', 'PSNR') + line('ssim', 'SSIM') + line('tv', 'TV') +
        `  difference RMS ${f(report.difference.rms)}, max ${f(mx)}; wrote ${paths.baseline} and ${paths.diff}\n`);
      if (o.stats) {
        const statsText = await fs.readFile(o.stats, 'utf8');
        const stats = JSON.parse(statsText) as Record<string, unknown>;
        stats.ab = report;
        await writeAtomically(o.stats, JSON.stringify(stats, (_k, v) => (typeof v === 'number' && !Number.isFinite(v) ? (Number.isNaN(v) ? 'nan' : v > 0 ? 'inf' : '-inf') : v), 2) + '\n');
      }
    }
    return 0;
  });
}
