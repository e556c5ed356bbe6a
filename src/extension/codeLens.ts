// A code lens above the first update: "Run once" (through the engine, on a generated scene) and, after a run,
// its one-line result. Switched off by `fluxel.codeLens.enabled`.

import * as vscode from 'vscode';
import { readSettings } from './config';
import { toRange } from './convert';
import type { DiagnosticManager } from './diagnostics';
import { LANGUAGE_ID } from './diagnostics';
import type { SchemeRunner } from './runner';
import { Disposable } from './util/dispose';

export const RUN_ONCE_COMMAND = 'fluxel.runOnce';
export const SHOW_LOG_COMMAND = 'fluxel.showLog';

export class RunLens extends Disposable implements vscode.CodeLensProvider {
  private readonly changed = this._register(new vscode.EventEmitter<void>());
  readonly onDidChangeCodeLenses = this.changed.event;

  constructor(private readonly manager: DiagnosticManager, private readonly runner: SchemeRunner) {
    super();
    this._register(vscode.languages.registerCodeLensProvider({ language: LANGUAGE_ID }, this));
    this._register(manager.onDidChangeState(() => this.changed.fire()));
    this._register(runner.onDidChange(() => this.changed.fire()));
    this._register(vscode.workspace.onDidChangeConfiguration((e) => { if (e.affectsConfiguration('fluxel.codeLens')) this.changed.fire(); }));
  }

  provideCodeLenses(doc: vscode.TextDocument): vscode.CodeLens[] {
    if (!readSettings(doc.uri).codeLensEnabled) return [];
    const state = this.manager.stateFor(doc) ?? this.manager.latest(doc.uri);
    if (!state) return [];
    const update = state.checked.program.decls.find((d) => d.kind === 'update');
    if (!update) return [];
    const line = toRange(update.range).start.line;
    if (line >= doc.lineCount) return [];
    const range = new vscode.Range(line, 0, line, 0);
    const running = this.runner.isRunning(doc.uri);
    const lenses = [new vscode.CodeLens(range, {
      title: running ? '$(loading~spin) Running…' : `$(play) Run once (${state.checked.scheme ? `${state.checked.scheme.steps} steps` : 'fix errors first'})`,
      command: running ? '' : RUN_ONCE_COMMAND,
      arguments: [doc.uri],
      tooltip: 'Run the scheme once through the engine on a generated scene and report the result',
    })];
    const last = this.runner.lastResult(doc.uri);
    if (last && !running) lenses.push(new vscode.CodeLens(range, { title: last.line, command: SHOW_LOG_COMMAND, tooltip: 'Show the Fluxel log' }));
    return lenses;
  }
}
