// Shared harness for the export verification tests: runs the engine and every exported target on the same
// generated scene and returns each field's values. External references: gcc compiles and runs the C export,
// Debian's /usr/bin/python3 (by path, contracts §7) runs the NumPy and Dask exports, Node imports the JS module.
import { execFileSync } from 'node:child_process';
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { createRun } from '../../../src/engine/run';
import { exportScheme, schemePrefix } from '../../../src/export';
import { makeScene } from '../../../src/images/scenes';
import { makeMask } from '../../../src/images/inputs';
import { parseAndCheck } from '../../../src/notation/index';
import type { CheckedScheme } from '../../../src/notation/scheme';

export const ROOT = join(__dirname, '../../..');
export const PYTHON = '/usr/bin/python3';
export type DType = 'float32' | 'float64';
export type FieldValues = (Float32Array | Float64Array)[];

export interface Case {
  readonly file: string;
  readonly text: string;
  readonly scheme: CheckedScheme;
  readonly width: number;
  readonly height: number;
  readonly steps: number;
  readonly dtype: DType;
  /** Input per field: the scene for image fields, null for fields with initial values. */
  readonly inputs: (Float64Array | null)[];
}

/** Chaotic or undamped schemes are compared over at most 20 steps (numerics.md, "Float32 semantics"). */
const SHORT_HORIZON = new Set(['gray-scott.fluxel', 'wave.fluxel']);

export function makeCase(file: string, dtype: DType, maxSteps = Infinity, width = 64, height = 48): Case {
  return caseOf(file, readFileSync(join(ROOT, 'examples', file), 'utf8'), dtype, maxSteps, width, height);
}

/** A case from scheme text (`file` names it, and gives the C prefix). */
export function caseOf(file: string, text: string, dtype: DType, maxSteps = Infinity, width = 64, height = 48): Case {
  const r = parseAndCheck(text);
  if (!r.scheme) throw new Error(`${file} has errors: ${r.diagnostics.map(d => `${d.range.start.line}: ${d.message}`).join('; ')}`);
  const scheme = r.scheme;
  // Our own generated scene (contracts: demo data from our code only), with noise so edges and flats both matter.
  const scene = makeScene('survey', { width, height, noise: 0.05, seed: 7 });
  let img = Float64Array.from(scene.noisy.data);
  if (scheme.dims === 1) {
    // The engine runs a 1d scheme on the image's middle row (src/engine/run.ts); the exports step every row alike.
    const row = Math.floor(height / 2);
    img = img.slice(row * width, (row + 1) * width);
    height = 1;
  }
  const steps = Math.min(maxSteps, SHORT_HORIZON.has(file) ? Math.min(20, scheme.steps) : scheme.steps);
  // Named inputs (a mask) get the generated mask; the channels of a grey scene are all the grey picture, alpha 1.
  let mask = Float64Array.from(makeMask(width, scene.noisy.height).data);
  if (scheme.dims === 1) mask = mask.slice(Math.floor(scene.noisy.height / 2) * width, (Math.floor(scene.noisy.height / 2) + 1) * width);
  const ones = new Float64Array(img.length).fill(1);
  const inputs = scheme.fields.map(f => (f.init.kind !== 'image' ? null : f.init.input !== null ? mask : f.init.channel === 'alpha' ? ones : img));
  return { file, text, scheme, width, height, steps, dtype, inputs };
}

export function exportOf(c: Case, target: 'c' | 'numpy' | 'dask' | 'js'): string {
  return exportScheme(c.scheme, target, { fileName: c.file, sourceHash: '0'.repeat(64), stability: null, dtype: c.dtype });
}

export function engineResult(c: Case): FieldValues {
  const fieldImages: Record<string, { width: number; height: number; data: Float64Array }> = {};
  c.scheme.fields.forEach((f, k) => {
    const v = c.inputs[k];
    if (v) fieldImages[f.name] = { width: c.width, height: c.height, data: v };
  });
  const run = createRun(c.scheme, {
    fieldImages,
    width: c.width, height: c.height, steps: c.steps, dtype: c.dtype,
  });
  run.runSync();
  return c.scheme.fields.map((_, k) => run.fieldData(k));
}

function typed(dtype: DType, data: ArrayLike<number>): Float32Array | Float64Array {
  return dtype === 'float32' ? Float32Array.from(data) : Float64Array.from(data);
}

function readRaw(file: string, dtype: DType): Float32Array | Float64Array {
  const b = readFileSync(file);
  const buf = b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength);
  return dtype === 'float32' ? new Float32Array(buf) : new Float64Array(buf);
}

function writeRaw(file: string, v: Float32Array | Float64Array): void {
  writeFileSync(file, Buffer.from(v.buffer, v.byteOffset, v.byteLength));
}

/** Compiles the C export with a small driver (reads/writes raw little-endian floats) and runs it. */
export function cResult(c: Case, dir: string, flags: string[] = ['-O2']): FieldValues {
  mkdirSync(dir, { recursive: true });
  const P = schemePrefix(c.file);
  const T = c.dtype === 'float32' ? 'float' : 'double';
  const n = c.scheme.fields.length;
  writeFileSync(join(dir, 'scheme.c'), exportOf(c, 'c'));
  const fieldArgs = c.scheme.fields.map((_, k) => `f${k}`).join(', ');
  writeFileSync(join(dir, 'driver.c'), [
    '#include "scheme.c"',
    '#include <stdio.h>',
    '#include <stdlib.h>',
    '#include <string.h>',
    'int main(int argc, char **argv) {',
    '  if (argc != 4 + 2 * ' + n + ') return 10;',
    '  int W = atoi(argv[1]), H = atoi(argv[2]), steps = atoi(argv[3]);',
    `  ${P}_params p = ${P}_defaults;`,
    ...c.scheme.fields.map((_, k) => `  ${T} *f${k} = calloc((size_t)W * H, sizeof(${T}));`),
    `  ${P}_init(${fieldArgs}, W, H, &p, ${P.toUpperCase()}_DT);`,
    ...c.scheme.fields.map((_, k) => `  if (strcmp(argv[${4 + k}], "-")) { FILE *f = fopen(argv[${4 + k}], "rb"); if (!f || fread(f${k}, sizeof(${T}), (size_t)W * H, f) != (size_t)W * H) return 11; fclose(f); }`),
    `  size_t bytes = ${P}_scratch_bytes(W, H, &p, ${P.toUpperCase()}_DT);`,
    '  void *scratch = malloc(bytes);',
    `  int rc = ${P}_step(${fieldArgs}, W, H, &p, ${P.toUpperCase()}_DT, 0, steps, scratch, bytes);`,
    '  if (rc) return 20 - rc;',
    ...c.scheme.fields.map((_, k) => `  { FILE *f = fopen(argv[${4 + n + k}], "wb"); fwrite(f${k}, sizeof(${T}), (size_t)W * H, f); fclose(f); }`),
    '  return 0;',
    '}',
  ].join('\n'));
  const exe = join(dir, 'driver');
  execFileSync('gcc', [...flags, '-std=c99', '-o', exe, join(dir, 'driver.c'), '-lm'], { stdio: 'pipe' });
  const ins = c.inputs.map((v, k) => {
    if (!v) return '-';
    const f = join(dir, `in${k}.raw`);
    writeRaw(f, typed(c.dtype, v));
    return f;
  });
  const outs = c.scheme.fields.map((_, k) => join(dir, `out${k}.raw`));
  execFileSync(exe, [String(c.width), String(c.height), String(c.steps), ...ins, ...outs], { stdio: 'pipe' });
  return outs.map(f => readRaw(f, c.dtype));
}

/** Writes the JS export as an ES module, imports it, and runs it. */
export async function jsResult(c: Case, dir: string): Promise<FieldValues> {
  mkdirSync(dir, { recursive: true });
  const file = join(dir, 'scheme.mjs');
  writeFileSync(file, exportOf(c, 'js'));
  const mod = await import(pathToFileURL(file).href);
  const fields = mod.init(c.width, c.height);
  const names: string[] = [...mod.fieldNames];
  c.inputs.forEach((v, k) => {
    if (v) fields[names[k]].set(v);
  });
  mod.run(fields, c.width, c.height, { steps: c.steps });
  return names.map(n => fields[n]);
}

/**
 * Runs the NumPy and Dask exports of several cases in one Python process (numpy/dask import once).
 * `mode` 'threads' uses Dask's local threaded scheduler; 'distributed' a dask.distributed LocalCluster.
 * Returns per case the NumPy result and the Dask result.
 */
export function pythonResults(cases: readonly Case[], dir: string, mode: 'threads' | 'distributed', chunks: [number, number] = [17, 23], numpyOnly = false): { numpy: FieldValues; dask: FieldValues }[] {
  mkdirSync(dir, { recursive: true });
  const jobs = cases.map((c, j) => {
    const np = join(dir, `np_${j}.py`), dk = join(dir, `dk_${j}.py`);
    writeFileSync(np, exportOf(c, 'numpy'));
    if (!numpyOnly) writeFileSync(dk, exportOf(c, 'dask'));
    const inputs = c.inputs.map((v, k) => {
      if (!v) return null;
      const f = join(dir, `in_${j}_${k}.raw`);
      writeRaw(f, typed(c.dtype, v));
      return f;
    });
    return {
      numpy: np, dask: numpyOnly ? null : dk, inputs, shape: [c.height, c.width], steps: c.steps, dtype: c.dtype, chunks,
      outNumpy: c.scheme.fields.map((_, k) => join(dir, `np_${j}_${k}.raw`)),
      outDask: c.scheme.fields.map((_, k) => join(dir, `dk_${j}_${k}.raw`)),
    };
  });
  const jobFile = join(dir, 'jobs.json');
  writeFileSync(jobFile, JSON.stringify(jobs));
  execFileSync(PYTHON, [join(__dirname, 'run_exports.py'), jobFile, mode], { stdio: 'pipe', timeout: 600_000 });
  return cases.map((c, j) => ({
    numpy: jobs[j].outNumpy.map(f => readRaw(f, c.dtype)),
    dask: numpyOnly ? [] : jobs[j].outDask.map(f => readRaw(f, c.dtype)),
  }));
}

/** Largest |a - b| / max(1, |b|), with where it happens; NaN anywhere counts as infinitely far. */
export function relError(a: ArrayLike<number>, b: ArrayLike<number>): { err: number; at: number } {
  if (a.length !== b.length) return { err: Infinity, at: -1 };
  let err = 0, at = -1;
  for (let i = 0; i < a.length; i++) {
    const e = Math.abs(a[i] - b[i]) / Math.max(1, Math.abs(b[i]));
    if (!(e <= err)) {
      err = Number.isNaN(e) ? Infinity : e;
      at = i;
    }
  }
  return { err, at };
}

/** Indices where two arrays differ bit for bit (as numbers; NaN equals NaN). */
export function differences(a: ArrayLike<number>, b: ArrayLike<number>): number[] {
  const out: number[] = [];
  for (let i = 0; i < Math.max(a.length, b.length); i++) if (!(Object.is(a[i], b[i]) || a[i] === b[i])) out.push(i);
  return out;
}
