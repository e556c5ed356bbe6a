// Code export: lowers a checked scheme once (ir.ts) and prints it for one target (C, NumPy, Dask, JavaScript).
// Callers (the CLI, later the editor command) pass the file name, the source hash and the stability verdict in,
// so this folder stays pure: no Node, vscode or DOM.

import type { CheckedScheme } from '../notation/scheme';
import { exportC } from './c';
import { exportDask } from './dask';
import type { ExportOptions } from './header';
import { lowerScheme } from './ir';
import { exportJs } from './js';
import type { Target } from './names';
import { exportNumpy } from './numpy';

export type { ExportOptions, StabilityFacts } from './header';
export { ExportError, lowerScheme, evalHalo } from './ir';
export type { ExportIR } from './ir';
export { schemePrefix, type Target } from './names';

export const TARGETS: readonly Target[] = ['c', 'numpy', 'dask', 'js'];

/** The generated source text for `target`. Throws ExportError for a construct the target cannot express. */
export function exportScheme(scheme: CheckedScheme, target: Target, opts: ExportOptions): string {
  const ir = lowerScheme(scheme);
  switch (target) {
    case 'c': return exportC(ir, opts);
    case 'numpy': return exportNumpy(ir, opts);
    case 'dask': return exportDask(ir, opts);
    case 'js': return exportJs(ir, opts);
  }
}
