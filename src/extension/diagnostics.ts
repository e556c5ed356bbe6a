// DiagnosticManager: publishes the checker's and the stability analysis' diagnostics for every open scheme.
// Fast checks (parse + check, a few ms) run after a short debounce on the host; the stability analysis runs in the
// analysis worker afterwards, and a result is published only if its text is still the document's text.
// The pure checker and analysis know nothing of this class; it only converts and schedules.

import * as vscode from 'vscode';
import type { StabilityReport } from '../analysis/stability';
import type { Diagnostic } from '../notation/diagnostics';
import type { CheckedResult } from '../notation/index';
import type { AnalysisClient } from './analysisClient';
import { readSettings } from './config';
import { toDiagnostic } from './convert';
import type { Core } from './core';
import { Disposable } from './util/dispose';

export const LANGUAGE_ID = 'fluxel';

/** What is known about one document at one version. */
export interface SchemeState {
  readonly uri: vscode.Uri;
  readonly version: number;
  readonly text: string;
  readonly checked: CheckedResult;
  /** Null while the analysis runs, when it is switched off, or when the scheme has errors. */
  readonly report: StabilityReport | null;
  readonly analysis: 'running' | 'done' | 'off' | 'not-applicable';
  /** Every diagnostic currently published for this version (checker + analysis). */
  readonly diagnostics: readonly Diagnostic[];
}

export class DiagnosticManager extends Disposable {
  private readonly collection: vscode.DiagnosticCollection;
  private readonly states = new Map<string, SchemeState>();
  private readonly timers = new Map<string, ReturnType<typeof setTimeout>>();
  private readonly generation = new Map<string, number>();
  private readonly changed = this._register(new vscode.EventEmitter<SchemeState>());
  /** Fires whenever a document's state changes (checked, analysed). */
  readonly onDidChangeState = this.changed.event;

  constructor(private readonly loadCore: () => Promise<Core>, private readonly analysis: AnalysisClient, private readonly log: (line: string) => void) {
    super();
    this.collection = this._register(vscode.languages.createDiagnosticCollection('fluxel'));
    this._register(vscode.workspace.onDidOpenTextDocument((d) => this.schedule(d, true)));
    this._register(vscode.workspace.onDidChangeTextDocument((e) => { if (e.contentChanges.length) this.schedule(e.document, false); }));
    this._register(vscode.workspace.onDidCloseTextDocument((d) => this.forget(d.uri)));
    this._register(vscode.workspace.onDidChangeConfiguration((e) => {
      if (e.affectsConfiguration('fluxel')) for (const d of vscode.workspace.textDocuments) this.schedule(d, true);
    }));
    for (const d of vscode.workspace.textDocuments) this.schedule(d, true);
  }

  /** Where the last analysis ran: 'worker' normally, 'host' only if the worker thread could not start. */
  lastThread: 'worker' | 'host' | null = null;

  /** The state of the document at its current version, or undefined if not checked yet. */
  stateFor(doc: vscode.TextDocument): SchemeState | undefined {
    const s = this.states.get(doc.uri.toString());
    return s && s.version === doc.version ? s : undefined;
  }

  /** The latest state, even if the document has changed since. */
  latest(uri: vscode.Uri): SchemeState | undefined {
    return this.states.get(uri.toString());
  }

  /** Checks now (no debounce) and resolves with the state once the analysis has finished. */
  async checkNow(doc: vscode.TextDocument): Promise<SchemeState | undefined> {
    await this.run(doc);
    return this.stateFor(doc);
  }

  private schedule(doc: vscode.TextDocument, immediate: boolean): void {
    if (doc.languageId !== LANGUAGE_ID) return;
    const key = doc.uri.toString();
    const t = this.timers.get(key);
    if (t) clearTimeout(t);
    const delay = immediate ? 0 : readSettings(doc.uri).debounceMs;
    this.timers.set(key, setTimeout(() => {
      this.timers.delete(key);
      this.run(doc).catch((err) => this.log(`checking ${doc.uri.fsPath} failed: ${err instanceof Error ? err.stack ?? err.message : String(err)}`));
    }, delay));
  }

  private async run(doc: vscode.TextDocument): Promise<void> {
    if (doc.isClosed || this.isDisposed) return;
    const key = doc.uri.toString();
    const gen = (this.generation.get(key) ?? 0) + 1;
    this.generation.set(key, gen);
    const current = (): boolean => this.generation.get(key) === gen && !doc.isClosed && !this.isDisposed;
    const core = await this.loadCore();
    if (!current()) return;
    const version = doc.version;
    const text = doc.getText();
    const checked = core.parseAndCheck(text);
    const settings = readSettings(doc.uri);
    const analysis: SchemeState['analysis'] = !settings.analysisEnabled ? 'off' : checked.scheme ? 'running' : 'not-applicable';
    this.publish({ uri: doc.uri, version, text, checked, report: null, analysis, diagnostics: checked.diagnostics });
    if (analysis !== 'running') return;
    const r = await this.analysis.analyse(key, text);
    if (r === 'stale' || !current() || doc.version !== version) return;
    if (r.error) this.log(`stability analysis failed: ${r.error}`);
    else this.log(`analysed ${vscode.workspace.asRelativePath(doc.uri)} v${version} in ${r.ms.toFixed(1)} ms (${r.thread === 'worker' ? 'analysis worker' : 'extension host'})`);
    this.lastThread = r.thread;
    this.publish({ uri: doc.uri, version, text, checked, report: r.report, analysis: 'done', diagnostics: [...checked.diagnostics, ...r.diagnostics] });
  }

  private publish(state: SchemeState): void {
    this.states.set(state.uri.toString(), state);
    this.collection.set(state.uri, state.diagnostics.map((d) => toDiagnostic(d, state.uri)));
    this.changed.fire(state);
  }

  private forget(uri: vscode.Uri): void {
    const key = uri.toString();
    const t = this.timers.get(key);
    if (t) clearTimeout(t);
    this.timers.delete(key);
    this.generation.set(key, (this.generation.get(key) ?? 0) + 1);
    this.states.delete(key);
    this.analysis.forget(key);
    this.collection.delete(uri);
  }

  override dispose(): void {
    for (const t of this.timers.values()) clearTimeout(t);
    this.timers.clear();
    super.dispose();
  }
}
