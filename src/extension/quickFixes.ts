// Quick fixes: a CodeActionProvider keyed by diagnostic code + data. It looks up the plain diagnostic behind each
// editor diagnostic, asks fixes.ts for the edits, and returns them as ordinary (undoable) WorkspaceEdits.

import * as vscode from 'vscode';
import { readSettings } from './config';
import { sameDiagnostic } from './convert';
import type { DiagnosticManager } from './diagnostics';
import { LANGUAGE_ID } from './diagnostics';
import { fixesFor } from './fixes';

export class FluxelQuickFixes implements vscode.CodeActionProvider {

  constructor(private readonly manager: DiagnosticManager) {}

  provideCodeActions(doc: vscode.TextDocument, _range: vscode.Range, context: vscode.CodeActionContext): vscode.CodeAction[] {
    const state = this.manager.stateFor(doc);
    if (!state) return [];
    const settings = readSettings(doc.uri);
    const out: vscode.CodeAction[] = [];
    for (const vd of context.diagnostics) {
      if (vd.source !== 'fluxel') continue;
      const plain = state.diagnostics.find((d) => sameDiagnostic(vd, d));
      if (!plain) continue;
      for (const fix of fixesFor(plain, state.checked.program, state.text, { safetyFraction: settings.safetyFraction })) {
        const action = new vscode.CodeAction(fix.title, vscode.CodeActionKind.QuickFix);
        const edit = new vscode.WorkspaceEdit();
        for (const e of fix.edits) edit.replace(doc.uri, new vscode.Range(doc.positionAt(e.start), doc.positionAt(e.end)), e.newText);
        action.edit = edit;
        action.diagnostics = [vd];
        action.isPreferred = fix.preferred;
        out.push(action);
      }
    }
    return out;
  }
}

export function registerQuickFixes(manager: DiagnosticManager): vscode.Disposable {
  return vscode.languages.registerCodeActionsProvider({ language: LANGUAGE_ID }, new FluxelQuickFixes(manager), {
    providedCodeActionKinds: [vscode.CodeActionKind.QuickFix],
  });
}
