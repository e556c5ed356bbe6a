// The editor's "Export Scheme as Code…" command without the editor: the target choices it offers, the name of the
// file it writes next to the scheme, and the code built from the document's current text (checked, analysed and
// printed by src/export exactly as `fluxel export` does). Must not import vscode: exportCommand.ts loads this
// module on first use and does the dialogs and the writing.

import { createHash } from 'node:crypto';
import { analyseStability } from '../analysis/stability';
import { ExportError, exportScheme, schemePrefix, TARGETS, type Target } from '../export/index';
import { parseAndCheck, type CheckedScheme } from '../notation/index';

export type Dtype = 'float32' | 'float64';

export interface TargetChoice {
  readonly target: Target;
  readonly label: string;
  readonly description: string;
}

/** The QuickPick items, in the order the CLI lists the targets. */
export const TARGET_CHOICES: readonly TargetChoice[] = [
  { target: 'c', label: 'C', description: 'C99, one step function over caller-provided buffers, libm only' },
  { target: 'numpy', label: 'NumPy', description: 'Python module over numpy.ndarray (whole-array slicing)' },
  { target: 'dask', label: 'Dask', description: 'Python module over dask.array (map_overlap), for images larger than memory' },
  { target: 'js', label: 'JavaScript', description: 'dependency-free ES module over typed arrays' },
];

export function isTarget(v: unknown): v is Target {
  return typeof v === 'string' && (TARGETS as readonly string[]).includes(v);
}

/** The target's display name ("C", "NumPy", "Dask", "JavaScript"). */
export function targetLabel(target: Target): string {
  return TARGET_CHOICES.find((c) => c.target === target)?.label ?? target;
}

const PY_KEYWORDS = new Set('False None True and as assert async await break class continue def del elif else except finally for from global if import in is lambda nonlocal not or pass raise return try while with yield'.split(' '));

/**
 * The file name the export is written to, beside the scheme (`schemeFileName` may be a path; only its last part
 * counts). C and JavaScript keep the scheme's name: `edge-preserving.fluxel` → `edge-preserving.c`,
 * `edge-preserving.mjs`. Python files get a name Python can import (the C prefix, which is lower case
 * [a-z0-9_]): `edge_preserving.py` for NumPy and `edge_preserving_dask.py` for Dask.
 */
export function exportFileName(schemeFileName: string, target: Target): string {
  const file = baseName(schemeFileName);
  const base = file.replace(/\.fluxel$/i, '') || 'scheme';
  if (target === 'c') return `${base}.c`;
  if (target === 'js') return `${base}.mjs`;
  let module = schemePrefix(file);
  if (PY_KEYWORDS.has(module)) module += '_scheme';
  return target === 'dask' ? `${module}_dask.py` : `${module}.py`;
}

export interface ExportProblem {
  readonly message: string;
  /** The 1-based source line it concerns, when there is one. */
  readonly line: number | null;
}

export type ExportBuild =
  | { readonly ok: true; readonly code: string; readonly fileName: string }
  | ({ readonly ok: false } & ExportProblem);

function baseName(schemeFileName: string): string {
  return schemeFileName.replace(/^.*[\\/]/, '');
}

/** Why `text` cannot be exported at all (its first error in source order and its line), or null when it checks. */
export function schemeProblem(text: string, schemeFileName: string): ExportProblem | null {
  return check(text, baseName(schemeFileName)).problem;
}

function check(text: string, file: string): { scheme: CheckedScheme; problem: null } | { scheme: null; problem: ExportProblem } {
  const checked = parseAndCheck(text);
  if (checked.scheme) return { scheme: checked.scheme, problem: null };
  const errors = checked.diagnostics.filter((d) => d.severity === 'error');
  const first = errors.reduce<(typeof errors)[number] | undefined>((a, d) => (!a || d.range.start.offset < a.range.start.offset ? d : a), undefined);
  const more = errors.length > 1 ? ` (and ${errors.length - 1} more)` : '';
  return {
    scheme: null,
    problem: first
      ? { line: first.range.start.line, message: `${file} has errors; fix them before exporting. Line ${first.range.start.line}: ${first.message}${more}` }
      : { line: null, message: `${file} could not be checked; fix it before exporting.` },
  };
}

/**
 * The generated code for `text` (the document as it is now, unsaved edits included). The header's hash is the
 * SHA-256 of the text as UTF-8, which is the file's hash once it is saved (without a byte-order mark).
 * Refuses, naming the first error and its line, when the text has errors or uses a construct the target
 * cannot express.
 */
export function buildExport(text: string, schemeFileName: string, target: Target, dtype: Dtype): ExportBuild {
  const file = baseName(schemeFileName);
  const checked = check(text, file);
  if (!checked.scheme) return { ok: false, ...checked.problem };
  const report = analyseStability(checked.scheme);
  try {
    const code = exportScheme(checked.scheme, target, {
      fileName: file,
      sourceHash: createHash('sha256').update(text, 'utf8').digest('hex'),
      stability: { method: report.method, limit: report.limit, unconditional: report.unconditional, reason: report.reason },
      dtype,
    });
    return { ok: true, code, fileName: exportFileName(file, target) };
  } catch (err) {
    if (!(err instanceof ExportError)) throw err;
    const m = /^line (\d+): (.*)$/s.exec(err.message);
    return m
      ? { ok: false, line: Number(m[1]), message: `${file} cannot export to ${targetLabel(target)}. Line ${m[1]}: ${m[2]}` }
      : { ok: false, line: null, message: `${file} cannot export to ${targetLabel(target)}: ${err.message}` };
  }
}
