// `fluxel run FILE ...`: runs a scheme in-process on an image or a generated scene and writes the result,
// optional frames and a --stats JSON document (contracts.md §4). Exit 0 ok, 1 input errors, 2 usage.
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
import { parseSensitivity, writeSensitivities } from './sensitivity';

const USAGE = [
  'usage: fluxel run FILE [--input PATH [--range LO:HI] | --scene NAME [--noise SIGMA] [--seed N]] [--size WxH]',
  '                  [--set NAME=VALUE ...] [--steps N] [--float64] [--field NAME] [--extremum-check] [--backend js|wasm|auto]',
  '                  --output PATH [--frames DIR --every K] [--stats PATH [--metric psnr|ssim]] [--sensitivity NAME[,NAME...]]',
  '  --set also accepts dt=VALUE; without --input or --scene, image fields use the survey scene.',
  '  --sensitivity K,dt writes d(output)/d(NAME) beside the output as OUTPUT-STEM.d-NAME.pfm, and with --stats the',
  '  derivatives of MSE, PSNR and SSIM against the clean scene (forward-mode derivatives on the JavaScript kernels).',
  '  With a scene, --stats gets `best`: the step (any step, not only recorded frames) maximising --metric (default psnr).',
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
  sensitivity: { type: 'string' },
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
    const sensitivity = o.sensitivity === undefined ? null : parseSensitivity(o.sensitivity, scheme, USAGE);
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
        // Sensitivity mode runs the JavaScript dual kernels (the SIMD ones carry no tangents); stats.backend says so.
        ...(sensitivity ? { sensitivity } : {}),
      });
    } catch (err) {
      if (err instanceof EngineError) {
        process.stderr.write(`fluxel run: ${file}: ${err.message}\n`);
        return 1;
      }
      throw err;
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
    if (backendChoice === 'wasm' && result.backend.startsWith('js')) {
      process.stderr.write(`fluxel run: ${file}: ran on ${result.backend}${sensitivity ? ' (the wasm kernels carry no derivatives)' : ''}\n`);
    }
    await Promise.all(frameWrites);
    // Derivative images only for a finished run (a blow-up writes no output at all).
    const sensitivityStats = sensitivity && result.status !== 'blow-up' ? await writeSensitivities(run, outIndex, sensitivity, o.output, reference) : null;

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
        warnings: result.warnings.map(w => ({ ...w, range: jsonRange(w.range) })),
        ...(tracker?.best() ? { best: tracker.best() } : result.best ? { best: result.best } : {}),
        sourceHash: createHash('sha256').update(text).digest('hex'),
        ...(seed !== undefined ? { seed } : {}),
        ...(sensitivityStats ? { sensitivity: sensitivityStats } : {}),
      };
      // JSON has no Infinity: PSNR of identical images is +∞ (numerics.md), written as the string "inf".
      await writeAtomically(o.stats, JSON.stringify(stats, (_k, v) => (typeof v === 'number' && !Number.isFinite(v) ? (Number.isNaN(v) ? 'nan' : v > 0 ? 'inf' : '-inf') : v), 2) + '\n');
    }
    if (result.status === 'blow-up') {
      process.stderr.write(`fluxel run: ${file}: the run blew up; no output written.\n`);
      return 1;
    }
    await writeImageFile(o.output, grey(run.fieldData(outIndex)));
    return 0;
  });
}
