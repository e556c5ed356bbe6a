// Shared helpers for the extension's provider tests: check and analyse a text as the editor would, and apply
// plain text edits. No vscode: the providers' logic is tested with plain objects.

import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { analyseStability, stabilityDiagnostics, type StabilityReport } from '../../../src/analysis/stability';
import type { Diagnostic } from '../../../src/notation/diagnostics';
import { parseAndCheck, type CheckedResult } from '../../../src/notation/index';
import type { TextEditSpec } from '../../../src/extension/fixes';

export const ROOT = join(__dirname, '../../..');

export function example(name: string): string {
  return readFileSync(join(ROOT, 'examples', name), 'utf8');
}

export interface Analysed {
  readonly checked: CheckedResult;
  readonly report: StabilityReport | null;
  readonly diagnostics: Diagnostic[];
}

export function analyse(text: string): Analysed {
  const checked = parseAndCheck(text);
  if (!checked.scheme) return { checked, report: null, diagnostics: [...checked.diagnostics] };
  const report = analyseStability(checked.scheme);
  return { checked, report, diagnostics: [...checked.diagnostics, ...stabilityDiagnostics(checked.scheme, report)] };
}

/** Applies edits (non-overlapping, any order) to a text, as a WorkspaceEdit would. */
export function applyEdits(text: string, edits: readonly TextEditSpec[]): string {
  let out = text;
  for (const e of [...edits].sort((a, b) => b.start - a.start)) out = out.slice(0, e.start) + e.newText + out.slice(e.end);
  return out;
}

export const HEAT = (dt: string): string =>
  `grid 2d\nspacing 1\nboundary reflect\nstep dt = ${dt} in [0.02, 0.3]\nsteps 40\n\nfield u = image\n\nu' = u + dt / h^2 * sum n in N4: u[n] - u\n`;
