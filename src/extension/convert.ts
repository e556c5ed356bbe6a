// Converts the notation's plain diagnostics and ranges (1-based line/column, end exclusive) into editor objects.
// The only place where our ranges meet vscode's 0-based ones.

import * as vscode from 'vscode';
import type { SourceRange } from '../notation/ast';
import type { Diagnostic } from '../notation/diagnostics';

export function toRange(r: SourceRange): vscode.Range {
  return new vscode.Range(r.start.line - 1, r.start.column - 1, r.end.line - 1, r.end.column - 1);
}

// A function, not a table: nothing may read vscode members while the bundle loads (the analysis worker loads it too).
function severity(s: Diagnostic['severity']): vscode.DiagnosticSeverity {
  if (s === 'error') return vscode.DiagnosticSeverity.Error;
  if (s === 'warning') return vscode.DiagnosticSeverity.Warning;
  return vscode.DiagnosticSeverity.Information;
}

export function toDiagnostic(d: Diagnostic, uri: vscode.Uri): vscode.Diagnostic {
  const out = new vscode.Diagnostic(toRange(d.range), d.message, severity(d.severity));
  out.source = 'fluxel';
  out.code = d.code;
  if (d.related?.length) out.relatedInformation = d.related.map((r) => new vscode.DiagnosticRelatedInformation(new vscode.Location(uri, toRange(r.range)), r.message));
  if (d.code.startsWith('unused-')) out.tags = [vscode.DiagnosticTag.Unnecessary];
  return out;
}

/** True when an editor diagnostic stands for the given plain one (same code and range). */
export function sameDiagnostic(v: vscode.Diagnostic, d: Diagnostic): boolean {
  const code = typeof v.code === 'object' && v.code !== null ? v.code.value : v.code;
  return code === d.code && v.range.isEqual(toRange(d.range));
}
