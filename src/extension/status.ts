// The verdict of the active scheme in the status bar (right side, shown only for .fluxel editors):
// "within limit · over the limit · estimate only · no bound known" with dt and its limit; a click opens the details.

import * as vscode from 'vscode';
import type { DiagnosticManager, SchemeState } from './diagnostics';
import { LANGUAGE_ID } from './diagnostics';
import { Disposable } from './util/dispose';
import { verdictOf } from './verdict';

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
  if (!s) return { text: '$(loading~spin) Fluxel: checking', tooltip: 'Checking the scheme' };
  if (s.analysis === 'off') return { text: '$(circle-slash) Fluxel: analysis off', tooltip: 'Stability analysis is switched off (fluxel.analysis.enabled)' };
  if (s.analysis === 'not-applicable') return { text: '$(error) Fluxel: fix errors first', tooltip: 'The scheme has errors; the stability analysis runs once they are fixed' };
  if (s.analysis === 'running' || !s.report) return { text: '$(loading~spin) Fluxel: analysing', tooltip: 'Stability analysis running' };
  const v = verdictOf(s.report);
  const icon = v.kind === 'within' ? '$(check)' : v.kind === 'over' ? '$(warning)' : v.kind === 'estimate' ? '$(info)' : '$(question)';
  return { text: `${icon} ${v.words} · ${v.figures}`, tooltip: `Fluxel stability: ${v.words}, ${v.figures} (${v.method}). Click for details.` };
}
