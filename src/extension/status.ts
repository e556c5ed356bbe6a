// The verdict of the active scheme in the status bar (right side, shown only for .fluxel editors):
// "within limit · over the limit · estimate only · no bound known" with dt and its limit; a click opens the details.

import * as vscode from 'vscode';
import type { DiagnosticManager, SchemeState } from './diagnostics';
import { LANGUAGE_ID } from './diagnostics';
import { Disposable } from './util/dispose';
import { statusWords } from './verdict';

export const SHOW_DETAILS_COMMAND = 'fluxel.showStabilityDetails';

export class VerdictStatus extends Disposable {
  private readonly item: vscode.StatusBarItem;

  constructor(private readonly manager: DiagnosticManager) {
    super();
    this.item = this._register(vscode.window.createStatusBarItem('fluxel.verdict', vscode.StatusBarAlignment.Right, 100));
    this.item.name = 'Fluxel Stability';
    this.item.command = SHOW_DETAILS_COMMAND;
    this._register(vscode.window.onDidChangeActiveTextEditor(() => this.update()));
    this._register(manager.onDidChangeState((s) => {
      if (vscode.window.activeTextEditor?.document.uri.toString() === s.uri.toString()) this.update();
    }));
    this.update();
  }

  private update(): void {
    const doc = vscode.window.activeTextEditor?.document;
    if (!doc || doc.languageId !== LANGUAGE_ID) {
      this.item.hide();
      return;
    }
    const s = this.manager.latest(doc.uri);
    const { text, tooltip } = statusText(s);
    this.item.text = text;
    this.item.tooltip = tooltip;
    this.item.show();
  }
}

export function statusText(s: SchemeState | undefined): { text: string; tooltip: string } {
  return statusWords(s ? { analysis: s.analysis, report: s.report } : undefined);
}
