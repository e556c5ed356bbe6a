// Hover provider: dt/step, diffusivities (with an inline plot), neighbour accesses and params. The content comes from
// hoverText.ts (no vscode); this file only finds the analysis that belongs to the document's current text.

import * as vscode from 'vscode';
import type { Core } from './core';
import type { DiagnosticManager } from './diagnostics';
import { LANGUAGE_ID } from './diagnostics';

export function registerHover(manager: DiagnosticManager, loadCore: () => Promise<Core>): vscode.Disposable {
  return vscode.languages.registerHoverProvider({ language: LANGUAGE_ID }, {
    async provideHover(doc, position, token) {
      const core = await loadCore();
      if (token.isCancellationRequested) return undefined;
      const text = doc.getText();
      const state = manager.stateFor(doc) ?? manager.latest(doc.uri);
      const fresh = state && state.text === text;
      const checked = fresh ? state.checked : core.parseAndCheck(text);
      const report = fresh ? state.report : null;
      const h = core.hoverFor({ program: checked.program, scheme: checked.scheme, report, offset: doc.offsetAt(position) });
      if (!h) return undefined;
      const md = new vscode.MarkdownString(h.markdown);
      return new vscode.Hover(md, new vscode.Range(doc.positionAt(h.start), doc.positionAt(h.end)));
    },
  });
}
