// The tuning problem shared by `fluxel sweep` and `fluxel fit`: the scheme (read and checked from its file),
// the noisy scene it runs on and the clean scene it is measured against, and the options both commands take.
// Node front-end helper (reads the file); must not import vscode or the DOM.

import { createHash } from 'node:crypto';
import { promises as fs } from 'node:fs';
import * as path from 'node:path';
import { InputBindingError } from '../images/inputs';
import { ImageError } from '../images/types';
import { UsageError } from '../cli/args';
import { loadInputs, type InputRecord } from '../cli/inputs';
import { parseAndCheck } from '../notation';
import type { CheckedScheme } from '../notation/scheme';
import { formatDiagnostic } from '../cli/check';
import { METRICS, type MetricName } from './evaluate';
import { GridError } from './grid';
import type { Picture } from './protocol';

/** A problem the user got wrong on the command line (exit 2) or in the input (exit 1), with one clear line. */
export class ProblemError extends Error {
  constructor(message: string, readonly exitCode: 1 | 2) {
    super(message);
  }
}

export interface Problem {
  readonly file: string;
  readonly source: string;
  readonly sourceHash: string;
  readonly scheme: CheckedScheme;
  readonly scene: string;
  readonly noise: number;
  readonly seed: number;
  readonly image: Picture;
  readonly reference: Picture;
  /** The picture of each `image` field (named inputs, channels of a colour scene), by field name. */
  readonly fieldImages?: Readonly<Record<string, Picture>>;
  /** Where every picture came from (scene, named input files with their SHA-256). */
  readonly inputs?: readonly InputRecord[];
}

export const PROBLEM_USAGE = 'FILE --scene NAME [--noise SIGMA] [--seed N] [--size WxH] [--input NAME=PATH|NAME=scene:SCENE ...] [--range NAME=LO:HI] [--steps N] [--metric psnr|ssim] [--workers N]';

export const PROBLEM_OPTIONS = {
  scene: { type: 'string' },
  input: { type: 'string', multiple: true },
  range: { type: 'string', multiple: true },
  noise: { type: 'string' },
  seed: { type: 'string' },
  size: { type: 'string' },
  steps: { type: 'string' },
  metric: { type: 'string' },
  workers: { type: 'string' },
  float64: { type: 'boolean' },
} as const;

export function parseNumber(text: string, what: string): number {
  const v = Number(text);
  if (text.trim() === '' || !Number.isFinite(v)) throw new ProblemError(`${what} needs a number, got '${text}'.`, 2);
  return v;
}

export function parseWhole(text: string, what: string, min: number, max = Number.MAX_SAFE_INTEGER): number {
  const v = parseNumber(text, what);
  if (!Number.isInteger(v) || v < min || v > max) throw new ProblemError(`${what} needs a whole number from ${min} to ${max}, got '${text}'.`, 2);
  return v;
}

export function parseMetric(text: string | undefined): MetricName {
  const m = (text ?? 'psnr').toLowerCase();
  if (!(METRICS as readonly string[]).includes(m)) throw new ProblemError(`--metric takes psnr or ssim, got '${text}'.`, 2);
  return m as MetricName;
}

/** Reads and checks the scheme, makes the scene; diagnostics are printed as file:line:col lines in the error. */
export async function loadProblem(file: string, o: { scene?: string; noise?: string; seed?: string; size?: string; input?: string[]; range?: string[] }): Promise<Problem> {
  if (!o.scene) throw new ProblemError('--scene NAME is required (survey, cells or card): tuning needs the clean scene to measure against.', 2);
  let source: string;
  try {
    source = await fs.readFile(file, 'utf8');
  } catch (err) {
    throw new ProblemError(`cannot read ${file}: ${(err as NodeJS.ErrnoException).code ?? String(err)}`, 1);
  }
  const checked = parseAndCheck(source);
  const errors = checked.diagnostics.filter((d) => d.severity === 'error');
  if (!checked.scheme || errors.length) throw new ProblemError(errors.map((d) => formatDiagnostic(file, d)).join('\n') || `${file}: the scheme has errors`, 1);
  const scheme = checked.scheme;
  if (!scheme.fields.some((f) => f.init.kind === 'image')) {
    throw new ProblemError(`${file}: no field starts from the image (\`field NAME = image\`), so there is nothing to compare with the clean scene.`, 1);
  }
  let size: { width: number; height: number } | undefined;
  if (o.size !== undefined) {
    const m = /^(\d+)x(\d+)$/.exec(o.size);
    if (!m) throw new ProblemError(`--size takes WxH, e.g. 128x96, got '${o.size}'.`, 2);
    size = { width: parseWhole(m[1], '--size width', 1, 8192), height: parseWhole(m[2], '--size height', 1, 8192) };
  }
  const noise = o.noise === undefined ? undefined : parseNumber(o.noise, '--noise');
  const seed = o.seed === undefined ? undefined : parseWhole(o.seed, '--seed', 0, 0xffffffff);
  // Tuning measures against the clean scene, so the main input is always the scene; named inputs may be files.
  const named = (o.input ?? []).filter((v) => /^[A-Za-z][A-Za-z0-9_-]*=/.test(v));
  if (named.length !== (o.input ?? []).length) throw new ProblemError('tuning runs on --scene: only named inputs (--input NAME=PATH) may be given.', 2);
  let loaded;
  try {
    loaded = await loadInputs(scheme, {
      scene: o.scene, input: named, range: o.range, size,
      ...(noise !== undefined ? { noise: String(noise) } : {}), ...(seed !== undefined ? { seed: String(seed) } : {}),
    }, '');
  } catch (err) {
    if (err instanceof UsageError) throw new ProblemError(err.message.trim(), 2);
    if (err instanceof ImageError) throw new ProblemError(err.message, err.code === 'bad-option' ? 2 : 1);
    if (err instanceof InputBindingError) throw new ProblemError(`${file}:${err.range ? `${err.range.start.line}:${err.range.start.column}` : ''} ${err.code} ${err.message}`, 1);
    const code = (err as NodeJS.ErrnoException).code;
    if (code) throw new ProblemError(`cannot read ${(err as NodeJS.ErrnoException).path ?? 'an input'}: ${code}`, 1);
    throw err;
  }
  const main = loaded.records.find((r) => r.name === null);
  if (!loaded.image || !loaded.reference || !main) throw new ProblemError(`${file}: no field reads the main input (\`field NAME = image\`), so there is nothing to compare with the clean scene.`, 1);
  return {
    file: path.normalize(file),
    source,
    sourceHash: createHash('sha256').update(source).digest('hex'),
    scheme,
    scene: main.source.slice('scene:'.length),
    noise: main.noise ?? 0,
    seed: main.seed ?? 1,
    image: loaded.image,
    reference: loaded.reference,
    fieldImages: loaded.fieldImages,
    inputs: loaded.records,
  };
}

/** JSON with non-finite numbers as the strings "inf", "-inf", "nan" (numerics.md: identical images print "inf"). */
export function toJson(value: unknown): string {
  return JSON.stringify(value, (_k, v) => (typeof v === 'number' && !Number.isFinite(v) ? (Number.isNaN(v) ? 'nan' : v > 0 ? 'inf' : '-inf') : v), 2) + '\n';
}

/** Outputs replace existing files only once complete (the project's one atomic writer). */
export { writeFileAtomically as writeAtomically } from '../images/files';

/** Metric value for people: dB with two decimals for PSNR, four decimals for SSIM, "inf" for identical images. */
export function showMetric(metric: MetricName, v: number): string {
  if (Number.isNaN(v)) return 'n/a';
  if (v === Infinity) return 'inf';
  return metric === 'psnr' ? `${v.toFixed(2)} dB` : v.toFixed(4);
}

/**
 * The exit code for a tuning command's expected failures (a bad problem or grid), after printing one line;
 * anything else is rethrown for the command's general guard.
 */
export function tuneFailure(command: string, err: unknown, usage: string): number {
  if (err instanceof ProblemError) {
    process.stderr.write(`fluxel ${command}: ${err.message}${err.exitCode === 2 ? `\n${usage}` : ''}\n`);
    return err.exitCode;
  }
  if (err instanceof GridError) {
    process.stderr.write(`fluxel ${command}: ${err.message}\n`);
    return 2;
  }
  throw err;
}
