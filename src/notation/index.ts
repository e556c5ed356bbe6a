// The notation's front door: text in, syntax tree plus ranged diagnostics plus (when error-free) the checked scheme out.
// Never throws on any input; this runs on every keystroke in the editor.
// Pure: imports nothing from Node, the DOM or vscode.

import type { Program } from './ast';
import { check } from './checker';
import type { Diagnostic } from './diagnostics';
import { LineIndex } from './lineIndex';
import { parseText } from './parser';
import type { CheckedScheme } from './scheme';

export type { Program, Expr, SourceRange, Position } from './ast';
export type { Diagnostic, Severity } from './diagnostics';
export type { CheckedScheme } from './scheme';

export interface ParseResult {
  readonly program: Program;
  readonly diagnostics: Diagnostic[];
}

export interface CheckedResult extends ParseResult {
  /** Null when any error was found. */
  readonly scheme: CheckedScheme | null;
}

/** Lexes and parses; syntax errors come back as diagnostics beside a partial tree. */
export function parse(text: string): ParseResult {
  const lines = new LineIndex(text);
  const range = lines.range(0, text.length);
  try {
    const r = parseText(text, lines);
    return { program: { kind: 'program', decls: r.decls, range }, diagnostics: sortDiagnostics(r.diagnostics) };
  } catch (err) {
    // Defence in depth: the parser recovers from every error we know of; if it ever throws, say so instead of crashing.
    const msg = err instanceof Error ? err.message : String(err);
    const d: Diagnostic = { range: lines.range(0, 0), severity: 'error', code: 'syntax-error', message: `The file could not be read as a scheme (${msg}).` };
    return { program: { kind: 'program', decls: [], range }, diagnostics: [d] };
  }
}

/** Parses and checks. `scheme` is set only for an error-free file. */
export function parseAndCheck(text: string): CheckedResult {
  const parsed = parse(text);
  const syntaxErrors = parsed.diagnostics.filter((d) => d.severity === 'error').length;
  try {
    const checked = check(parsed.program, syntaxErrors);
    return { program: parsed.program, diagnostics: sortDiagnostics([...parsed.diagnostics, ...checked.diagnostics]), scheme: checked.scheme };
  } catch (err) {
    const msg = err instanceof Error ? err.message : String(err);
    const d: Diagnostic = { range: parsed.program.range, severity: 'error', code: 'syntax-error', message: `Internal checker failure (${msg}); please report it with this file.` };
    return { program: parsed.program, diagnostics: [...parsed.diagnostics, d], scheme: null };
  }
}

function sortDiagnostics(ds: Diagnostic[]): Diagnostic[] {
  return ds.sort((a, b) => a.range.start.offset - b.range.start.offset || a.range.end.offset - b.range.end.offset);
}
