// `fluxel run FILE ...`: runs a scheme in-process on an image or a generated scene and writes the result,
// optional frames and a --stats JSON document (contracts.md §4). Exit 0 ok, 1 input errors, 2 usage.
// `--baseline OTHER.fluxel` (A/B): runs OTHER on the same input, steps and precision, writes its result beside the
// output as NAME.baseline.EXT and the signed difference (this − baseline) as NAME.diff.pfm, and reports the deltas
// (PSNR, SSIM against the clean scene, total variation, difference RMS/max) on stdout and under `ab` in --stats.
// Node-only front end over src/engine, src/images and src/notation; must not import vscode.

import { createHash } from 'node:crypto';
import { promises as fs } from 'node:fs';
import * as os from 'node:os';
import * as path from 'node:path';
import { formatFromExtension } from '../images/codec';
import { writeColourImageFile, writeFileAtomically, writeImageFile } from '../images/files';
import { colourFields } from '../images/inputs';
import { ImageError, type GreyImage } from '../images/types';
import { parseAndCheck } from '../notation';
import type { SourceRange } from '../notation/ast';
import { createRun, EngineError, type RunImage, type RunWarning } from '../engine';
import { BACKEND_CHOICES, backendByName, type BackendChoice } from '../engine/wasm/select';
import { guard, parseCommandLine, UsageError, numberArg, sizeArg, wholeArg } from './args';
import { inputFailure, loadInputs, type InputRecord, type LoadedInputs } from './inputs';
import { formatDiagnostic, loadScheme } from './check';
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
import { parseSensitivity, writeSensitivities } from './sensitivity';

const USAGE = [
  'usage: fluxel run FILE [--input PATH [--range LO:HI] | --scene NAME [--noise SIGMA] [--seed N]] [--size WxH]',
  '                  [--input NAME=PATH|NAME=scene:SCENE [--range NAME=LO:HI] ...]',
  '                  [--set NAME=VALUE ...] [--steps N] [--float64] [--field NAME] [--extremum-check] [--backend js|wasm|auto]',
  '                  --output PATH [--frames DIR --every K] [--stats PATH [--metric psnr|ssim]] [--sensitivity NAME[,NAME...]]',
  '       fluxel run --replay STATS.json [--output PATH]',
  '  --set also accepts dt=VALUE; without --input or --scene, image fields use the survey scene.',
  '  --input NAME=PATH gives the picture of `image "NAME"` fields; scene:mask is the generated mask, scene:palette the colour chart.',
  '  --sensitivity K,dt writes d(output)/d(NAME) beside the output as OUTPUT-STEM.d-NAME.pfm, and with --stats the',
  '  derivatives of MSE, PSNR and SSIM against the clean scene (forward-mode derivatives on the JavaScript kernels).',
  '  With a scene, --stats gets `best`: the step (any step, not only recorded frames) maximising --metric (default psnr).',
  '  --baseline OTHER.fluxel: also run OTHER on the same input; writes NAME.baseline.EXT and NAME.diff.pfm beside',
  '  --output and the deltas (this − baseline) of PSNR, SSIM (with a scene), TV and the difference.',
  '  A scheme with fields bound to image.red, .green and .blue writes a colour .png or .pfm unless --field picks one.',
  '  --replay repeats the run a --stats file records and exits 1 unless its output hash matches.',
].join('\n');

const OPTIONS = {
  input: { type: 'string', multiple: true },
  range: { type: 'string', multiple: true },
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
  replay: { type: 'string' },
  sensitivity: { type: 'string' },
  help: { type: 'boolean', short: 'h' },
} as const;

const number = (text: string, what: string): number => numberArg(text, what, USAGE);
const whole = (text: string, what: string, min: number): number => wholeArg(text, what, min, USAGE);

const jsonRange = (r: SourceRange) => ({ start: { line: r.start.line, column: r.start.column }, end: { line: r.end.line, column: r.end.column } });

/** The stats file, like the image, replaces an existing file only once complete. */
const writeAtomically = writeFileAtomically;

/** What a replay checks: the scheme's source hash, the input files' hashes and the output hash a --stats file recorded. */
interface Expected {
  readonly statsPath: string;
  readonly sourceHash: string;
  readonly outputHash: string;
  readonly inputs: readonly InputRecord[];
}

export function runMain(argv: string[]): Promise<number> {
  return guard('run', async () => {
    const { values: o } = parseCommandLine(argv, OPTIONS, USAGE);
    if (o.replay !== undefined && !o.help) return replay(argv, o.replay, o.output);
    return runCommand(argv, null);
  });
}

async function runCommand(argv: string[], expected: Expected | null): Promise<number> {
  {
    const { values: o, positionals } = parseCommandLine(argv, OPTIONS, USAGE);
    if (o.help) {
      process.stdout.write(USAGE + '\n');
      return 0;
    }
    if (positionals.length !== 1) throw new UsageError(`expected one FILE.\n${USAGE}`);
    const file = positionals[0];
    if (!o.output) throw new UsageError(`--output PATH is required.\n${USAGE}`);
    if (formatFromExtension(o.output) === null) throw new UsageError(`cannot tell the output format of ${o.output}; use .png, .pgm, .pfm, .tif or .tiff.`);
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

    const loaded = await loadScheme('run', file);
    if (!loaded) return 1;
    const { text, scheme } = loaded;
    const sourceHash = createHash('sha256').update(text).digest('hex');
    if (expected && sourceHash !== expected.sourceHash) {
      process.stderr.write(`fluxel run: replay of ${expected.statsPath}: ${file} has changed since the run (source SHA-256 ${sourceHash}, recorded ${expected.sourceHash}).\n`);
      return 1;
    }
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

    // The pictures: the main input (a file, a scene, or the survey scene when a field needs it) and named inputs.
    let inputs: LoadedInputs;
    try {
      inputs = await loadInputs(scheme, { input: o.input, range: o.range, scene: o.scene, noise: o.noise, seed: o.seed, size }, USAGE);
    } catch (err) {
      if (err instanceof UsageError) throw err;
      return inputFailure('run', file, err);
    }
    if (expected) {
      for (const want of expected.inputs) {
        const got = inputs.records.find(r => r.name === want.name);
        if (want.sha256 !== undefined && got?.sha256 !== want.sha256) {
          process.stderr.write(`fluxel run: replay of ${expected.statsPath}: the ${want.name === null ? 'main input' : `input "${want.name}"`} ${want.source} has changed since the run (SHA-256 ${got?.sha256 ?? 'none'}, recorded ${want.sha256}).\n`);
          return 1;
        }
      }
    }
    const image = inputs.image;
    const reference = inputs.reference;
    const inputName = inputs.label;
    const seed = inputs.seed;

    let run;
    try {
      run = createRun(scheme, {
        image, fieldImages: inputs.fieldImages, reference, params, dt, steps, every,
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
          image, fieldImages: inputs.fieldImages, steps, width: size?.width, height: size?.height,
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

    const colourOut = o.field === undefined ? colourFields(scheme) : null;
    const outFormat = formatFromExtension(o.output);
    if (colourOut && outFormat !== 'png' && outFormat !== 'pfm') {
      throw new UsageError(`${file} binds image.red, .green and .blue, so its result is a colour picture: write it as .png or .pfm, or pick one channel with --field NAME.`);
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
      // The tracker reads the field after every step: no two steps per pass then.
      everyStep: tracker !== null,
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

    // The output hash covers the whole final state: every field, in declaration order (see stateHash).
    const outputHash = stateHash(scheme.fields.map((_, k) => run.fieldData(k)));
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
        sourceHash,
        ...(seed !== undefined ? { seed } : {}),
        // Provenance (issue 12): every picture with its file's SHA-256, the backend asked for, and the output hash.
        inputs: inputs.records,
        backendChoice,
        width: run.geometry.width,
        height: run.geometry.height,
        outputHash,
        outputHashRule: STATE_HASH_RULE,
        ...(sensitivityStats ? { sensitivity: sensitivityStats } : {}),
      };
      // JSON has no Infinity: PSNR of identical images is +∞ (numerics.md), written as the string "inf".
      await writeAtomically(o.stats, JSON.stringify(stats, (_k, v) => (typeof v === 'number' && !Number.isFinite(v) ? (Number.isNaN(v) ? 'nan' : v > 0 ? 'inf' : '-inf') : v), 2) + '\n');
    }
    if (o.frames) {
      // A sidecar beside the frames records how they were made (the same provenance as --stats).
      await writeAtomically(path.join(o.frames, `${outName}-frames.json`), JSON.stringify({
        scheme: file, sourceHash, params: result.params, dt: result.dt, steps: result.steps, every,
        backend: result.backend, backendChoice, dtype: result.dtype, inputs: inputs.records, ...(seed !== undefined ? { seed } : {}),
        field: outName, outputHash, outputHashRule: STATE_HASH_RULE,
      }, null, 2) + '\n');
    }
    if (result.status === 'blow-up') {
      process.stderr.write(`fluxel run: ${file}: the run blew up; no output written.\n`);
      return 1;
    }
    const colour = colourOut;
    try {
      if (colour) {
        const byName = (name: string) => grey(run.fieldData(scheme.fields.findIndex(f => f.name === name)));
        await writeColourImageFile(o.output, byName(colour.red), byName(colour.green), byName(colour.blue));
      } else await writeImageFile(o.output, grey(run.fieldData(outIndex)));
    } catch (err) {
      if (err instanceof ImageError) {
        process.stderr.write(`fluxel run: ${err.message}\n`);
        return 2;
      }
      throw err;
    }
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
    if (expected) {
      if (outputHash !== expected.outputHash) {
        process.stderr.write(`fluxel run: replay of ${expected.statsPath} differs: output hash ${outputHash}, recorded ${expected.outputHash}.\n`);
        return 1;
      }
      process.stdout.write(`replay of ${expected.statsPath} matches: output hash ${outputHash}\n`);
    }
    return 0;
  }
}

/** How the output hash is computed, recorded beside it. */
export const STATE_HASH_RULE = 'sha256 of every field in declaration order, each row-major (y down) over the image, as Float32 little-endian';

/** SHA-256 (hex) of the fields' values as Float32 little-endian, fields in declaration order, each row-major. */
export function stateHash(fields: readonly ArrayLike<number>[]): string {
  const h = createHash('sha256');
  for (const f of fields) {
    const bytes = new Uint8Array(f.length * 4);
    const view = new DataView(bytes.buffer);
    for (let i = 0; i < f.length; i++) view.setFloat32(4 * i, f[i], true);
    h.update(bytes);
  }
  return h.digest('hex');
}

/** `--replay STATS.json`: the command line the stats record, run again, checked against the recorded hashes. */
async function replay(argv: string[], statsPath: string, output: string | undefined): Promise<number> {
  const extra = argv.filter(a => a !== '--replay' && a !== statsPath && !a.startsWith('--replay='));
  if (extra.some((a, i) => a !== '--output' && a !== '-o' && extra[i - 1] !== '--output' && extra[i - 1] !== '-o' && !a.startsWith('--output='))) {
    throw new UsageError(`--replay takes only --output besides the stats file.\n${USAGE}`);
  }
  let stats: Record<string, unknown>;
  try {
    stats = JSON.parse(await fs.readFile(statsPath, 'utf8')) as Record<string, unknown>;
  } catch (err) {
    process.stderr.write(`fluxel run: cannot read ${statsPath} as JSON: ${(err as NodeJS.ErrnoException).code ?? (err as Error).message}\n`);
    return 1;
  }
  const str = (k: string): string => {
    if (typeof stats[k] !== 'string') throw new UsageError(`${statsPath} has no \`${k}\`: it is not a --stats file of this version (it needs scheme, sourceHash, outputHash, inputs, params, dt, steps, dtype).`);
    return stats[k] as string;
  };
  const file = str('scheme');
  const sourceHash = str('sourceHash');
  const outputHash = str('outputHash');
  const dtype = str('dtype');
  const inputs = stats.inputs;
  const params = stats.params;
  if (!Array.isArray(inputs) || typeof params !== 'object' || params === null || typeof stats.dt !== 'number' || typeof stats.steps !== 'number') {
    throw new UsageError(`${statsPath} lacks inputs, params, dt or steps: it is not a --stats file of this version.`);
  }
  const args: string[] = [file];
  for (const r of inputs as InputRecord[]) {
    const range = r.range ? `${r.range.lo}:${r.range.hi}` : null;
    if (r.name === null) {
      if (r.source.startsWith('scene:')) {
        args.push('--scene', r.source.slice('scene:'.length), '--size', `${r.width}x${r.height}`);
        if (r.noise !== undefined) args.push('--noise', String(r.noise));
        if (r.seed !== undefined) args.push('--seed', String(r.seed));
      } else {
        args.push('--input', r.source);
        if (range) args.push('--range', range);
      }
    } else {
      args.push('--input', `${r.name}=${r.source}`);
      if (range) args.push('--range', `${r.name}=${range}`);
    }
  }
  if (!(inputs as InputRecord[]).some(r => r.name === null) && typeof stats.width === 'number' && typeof stats.height === 'number') {
    args.push('--size', `${stats.width}x${stats.height}`);
  }
  for (const [k, v] of Object.entries(params as Record<string, number>)) args.push('--set', `${k}=${v}`);
  args.push('--set', `dt=${stats.dt as number}`, '--steps', String(stats.steps));
  if (dtype === 'float64') args.push('--float64');
  const choice = typeof stats.backendChoice === 'string' ? stats.backendChoice : str('backend').startsWith('js') ? 'js' : 'wasm';
  args.push('--backend', choice);
  let out = output;
  let tmp: string | null = null;
  if (out === undefined) {
    tmp = await fs.mkdtemp(path.join(os.tmpdir(), 'fluxel-replay-'));
    out = path.join(tmp, 'replay.pfm');
  }
  args.push('--output', out);
  try {
    return await runCommand(args, { statsPath, sourceHash, outputHash, inputs: inputs as InputRecord[] });
  } finally {
    if (tmp) await fs.rm(tmp, { recursive: true, force: true });
  }
}
