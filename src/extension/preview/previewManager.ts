// Keeps one live run panel per scheme document: opens or reveals it, revives panels after a reload through the
// WebviewPanelSerializer (the page's saved state names its document), and owns the shared analysis threads.

import * as vscode from 'vscode';
import { Disposable } from '../util/dispose';
import { AnalysisClient, SplitAnalysis } from './analysisClient';
import { LIVE_RUN_VIEW_TYPE, LiveRunPanel, webviewOptions } from './previewPanel';

export class PreviewManager extends Disposable implements vscode.WebviewPanelSerializer {
  private readonly panels = new Map<string, LiveRunPanel>();
  private analysis: SplitAnalysis | null = null;

  constructor(private readonly context: vscode.ExtensionContext, private readonly log: (line: string) => void) {
    super();
    this._register(vscode.window.registerWebviewPanelSerializer(LIVE_RUN_VIEW_TYPE, this));
    this._register({ dispose: () => { void this.analysis?.dispose(); this.analysis = null; } });
  }

  private analysisService(): SplitAnalysis {
    this.analysis ??= new SplitAnalysis(new AnalysisClient(), () => new AnalysisClient());
    return this.analysis;
  }

  private attach(panel: vscode.WebviewPanel, document: vscode.Uri): LiveRunPanel {
    const p = new LiveRunPanel(panel, document, {
      extensionUri: this.context.extensionUri,
      memory: this.context.workspaceState,
      analysis: () => this.analysisService(),
      log: this.log,
    });
    const key = document.toString();
    this.panels.set(key, p);
    p.onDidDispose(() => { if (this.panels.get(key) === p) this.panels.delete(key); });
    return p;
  }

  /** Opens the live run of `document` (or reveals the open one) beside the editor, keeping the editor focused. */
  open(document: vscode.Uri, beside: boolean): LiveRunPanel {
    const existing = this.panels.get(document.toString());
    if (existing) {
      existing.panel.reveal(undefined, true);
      return existing;
    }
    const column = beside ? vscode.ViewColumn.Beside : vscode.ViewColumn.Active;
    const panel = vscode.window.createWebviewPanel(LIVE_RUN_VIEW_TYPE, 'Fluxel', { viewColumn: column, preserveFocus: true }, webviewOptions(this.context.extensionUri));
    return this.attach(panel, document);
  }

  get(document: vscode.Uri): LiveRunPanel | undefined {
    return this.panels.get(document.toString());
  }

  /** The panel that is focused now, if any. */
  active(): LiveRunPanel | undefined {
    for (const p of this.panels.values()) if (p.panel.active) return p;
    return undefined;
  }

  async deserializeWebviewPanel(panel: vscode.WebviewPanel, state: unknown): Promise<void> {
    const source = typeof state === 'object' && state !== null && typeof (state as { source?: unknown }).source === 'string' ? (state as { source: string }).source : null;
    if (!source) {
      panel.dispose();
      return;
    }
    const uri = vscode.Uri.parse(source, true);
    const prior = this.panels.get(uri.toString());
    if (prior) prior.dispose();
    this.attach(panel, uri);
  }

  override dispose(): void {
    for (const p of [...this.panels.values()]) p.dispose();
    this.panels.clear();
    super.dispose();
  }
}
