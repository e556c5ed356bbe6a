// `fluxel run --sensitivity NAME[,NAME...]`: the names to differentiate by (declared params and dt), the derivative
// images written beside the output (PFM, values unchanged, negative ones included) and the `sensitivity` entry of
// --stats with the derivatives of MSE, PSNR and SSIM against the clean reference (docs/sensitivities.md).
// Node-only helper of src/cli/run.ts; must not import vscode.

import * as path from 'node:path';
import { metricSensitivities } from '../analysis/metricGradients';
import type { Run, RunImage } from '../engine';
import { middleRow } from '../engine';
import { writeImageFile } from '../images/files';
import type { CheckedScheme } from '../notation/scheme';
import { UsageError } from './args';

/** The chosen names, in the given order; unknown or repeated names are usage errors naming what is available. */
export function parseSensitivity(text: string, scheme: CheckedScheme, usage: string): string[] {
  const names = text.split(',').map(s => s.trim());
  const known = [...scheme.params.map(p => p.name), 'dt'];
  const seen = new Set<string>();
  for (const n of names) {
    if (n === '') throw new UsageError(`--sensitivity takes NAME[,NAME...], got '${text}'.\n${usage}`);
    if (!known.includes(n)) throw new UsageError(`--sensitivity ${n}: the scheme has no parameter '${n}' (names: ${known.join(', ')}).`);
    if (seen.has(n)) throw new UsageError(`--sensitivity names '${n}' twice.`);
    seen.add(n);
  }
  return names;
}

/** Where d(output)/d(NAME) goes: beside the output, `STEM.d-NAME.pfm` (out/result.png → out/result.d-K.pfm). */
export function sensitivityPath(output: string, name: string): string {
  const ext = path.extname(output);
  return `${ext ? output.slice(0, -ext.length) : output}.d-${name}.pfm`;
}

export interface SensitivityEntry {
  /** The field differentiated (the output field) and the step (the last one). */
  readonly field: string;
  readonly step: number;
  readonly image: string;
  readonly mse?: number;
  readonly psnr?: number;
  readonly ssim?: number;
}

/**
 * Writes one derivative image per name (each through the atomic writer) and returns the stats entry: per name the
 * image's path and, with a clean reference, dMSE, dPSNR (dB per unit) and dSSIM of the output field.
 */
export async function writeSensitivities(run: Run, field: number, names: readonly string[], output: string, reference: RunImage | null): Promise<Record<string, SensitivityEntry>> {
  const g = run.geometry;
  const fieldName = run.scheme.fields[field].name;
  const tangents = names.map(n => run.sensitivityData(field, n));
  let metrics: ReturnType<typeof metricSensitivities> | null = null;
  if (reference) {
    const clean = run.scheme.dims === 1 && reference.height !== g.height ? middleRow(reference) : reference;
    const ref = { width: g.width, height: g.height, data: Float64Array.from(clean.data) };
    const img = { width: g.width, height: g.height, data: Float64Array.from(run.fieldData(field)) };
    metrics = metricSensitivities(ref, img, tangents);
  }
  const out: Record<string, SensitivityEntry> = {};
  for (let j = 0; j < names.length; j++) {
    const file = sensitivityPath(output, names[j]);
    await writeImageFile(file, { width: g.width, height: g.height, data: Float32Array.from(tangents[j]) });
    const m = metrics?.[j];
    out[names[j]] = { field: fieldName, step: run.stepIndex, image: file, ...(m ? { mse: m.mse, psnr: m.psnr, ...(m.ssim !== undefined ? { ssim: m.ssim } : {}) } : {}) };
  }
  return out;
}
