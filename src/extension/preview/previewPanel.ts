// One live run panel beside a scheme editor: owns the WebviewPanel, sets its page once, validates every message
// from it, and connects a PreviewSession (the vscode-free orchestration) to the document, the settings, the file
// picker, the editor (reveal, undoable knob edits) and the per-file memory of the input choice.

import * as vscode from 'vscode';
import { validateFromPreview, validInput, type InputChoice, type ToPreview, type WireRange } from '../../protocol/preview';
import { Disposable } from '../util/dispose';
import { backendChoice } from '../config';
import { liveRunHtml, makeNonce } from './previewHtml';
import type { BackendChoice } from '../../engine/wasm/select';
import type { FitJob, FitOutcome, GreyPicture, PreviewSession, SessionSettings } from './session';
import type { AnalysisService } from './analysisClient';
import type { OffsetEdit } from './frames';

export const LIVE_RUN_VIEW_TYPE = 'fluxel.liveRun';
/** The action of the notification that offers to write fitted knob values back. */
export const WRITE_FIT = 'Write into the file';

/**
 * A knob fit in src/tune's worker pool (off the host thread), loaded on first use. The pool uses every core but
 * one, at least one: the live run's own worker keeps a core for the rerun that follows.
 */
async function runKnobFit(job: FitJob, signal: AbortSignal, onEvaluation: (count: number) => void): Promise<FitOutcome> {
  const [{ runFit }, { defaultWorkers }] = await Promise.all([import('../../tune/fit'), import('../../tune/pool')]);
  const r = await runFit(job, {
    free: job.free, steps: job.steps, metric: job.metric, workers: Math.max(1, defaultWorkers() - 1), backend: job.backend, signal, onEvaluation,
  });
  return { values: r.values, step: r.step, best: r.best, noisy: r.noisy, evaluations: r.evaluations };
}

export interface PanelContext {
  readonly extensionUri: vscode.Uri;
  readonly memory: vscode.Memento;
  readonly analysis: () => AnalysisService;
  readonly log: (line: string) => void;
}

export function readLiveRunSettings(scope?: vscode.Uri): SessionSettings {
  const c = vscode.workspace.getConfiguration('fluxel.liveRun', scope);
  const clamp = (v: unknown, lo: number, hi: number, d: number) => (typeof v === 'number' && Number.isFinite(v) ? Math.min(hi, Math.max(lo, v)) : d);
  return {
    debounceMs: clamp(c.get('debounceMs'), 0, 5000, 150),
    maxPreviewSize: Math.round(clamp(c.get('maxPreviewSize'), 16, 4096, 512)),
    sceneSize: Math.round(clamp(c.get('sceneSize'), 16, 2048, 256)),
    backend: readBackendSetting(scope),
  };
}

/** `fluxel.engine.backend`: the kernel backend of the live run and its knob fits. */
export function readBackendSetting(scope?: vscode.Uri): BackendChoice {
  return backendChoice(vscode.workspace.getConfiguration('fluxel.engine', scope).get('backend'));
}

export function webviewOptions(extensionUri: vscode.Uri): vscode.WebviewOptions & vscode.WebviewPanelOptions {
  return {
    enableScripts: true,
    enableForms: false,
    enableCommandUris: false,
    localResourceRoots: [vscode.Uri.joinPath(extensionUri, 'dist', 'media')],
  };
}

const inputKey = (uri: vscode.Uri) => `fluxel.liveRun.input:${uri.toString()}`;
const knobsKey = (uri: vscode.Uri) => `fluxel.liveRun.knobs:${uri.toString()}`;
const namedInputsKey = (uri: vscode.Uri) => `fluxel.liveRun.namedInputs:${uri.toString()}`;
const pinnedKey = (uri: vscode.Uri) => `fluxel.liveRun.pinned:${uri.toString()}`;

function fileNameOf(uri: vscode.Uri): string {
  return uri.path.split('/').pop() ?? uri.toString();
}

export class LiveRunPanel extends Disposable {
  private session: PreviewSession | null = null;
  private readonly ready: Promise<void>;
  private readonly disposeEmitter = this._register(new vscode.EventEmitter<void>());
  readonly onDidDispose = this.disposeEmitter.event;

  constructor(readonly panel: vscode.WebviewPanel, readonly document: vscode.Uri, private readonly ctx: PanelContext) {
    super();
    panel.webview.options = webviewOptions(ctx.extensionUri);
    panel.title = `Fluxel · ${fileNameOf(document)}`;
    panel.iconPath = undefined;
    const media = vscode.Uri.joinPath(ctx.extensionUri, 'dist', 'media');
    panel.webview.html = liveRunHtml({
      cspSource: panel.webview.cspSource,
      nonce: makeNonce(),
      scriptUri: panel.webview.asWebviewUri(vscode.Uri.joinPath(media, 'preview.js')).toString(),
      styleUri: panel.webview.asWebviewUri(vscode.Uri.joinPath(media, 'preview.css')).toString(),
      source: document.toString(),
      fileName: fileNameOf(document),
    });
    this._register(panel.onDidDispose(() => this.dispose()));
    this._register(panel.webview.onDidReceiveMessage((raw: unknown) => {
      const msg = validateFromPreview(raw);
      if (!msg || msg.source !== document.toString()) {
        this.dropped(raw, msg ? 'it names another document' : 'it is not a valid live run message');
        return;
      }
      void this.ready.then(() => this.session?.handle(msg)).catch((err) => ctx.log(`live run: ${String(err)}`));
    }));
    this._register(panel.onDidChangeViewState(() => {
      void vscode.commands.executeCommand('setContext', 'fluxel.liveRunFocused', panel.active);
    }));
    this._register(vscode.workspace.onDidChangeTextDocument((e) => {
      if (e.document.uri.toString() === document.toString() && e.contentChanges.length) this.session?.documentChanged(e.document.getText());
    }));
    this._register(vscode.workspace.onDidChangeConfiguration((e) => {
      if (e.affectsConfiguration('fluxel.liveRun', document) || e.affectsConfiguration('fluxel.engine.backend', document)) this.session?.refresh();
    }));
    this.ready = this.start();
  }

  private async start(): Promise<void> {
    const [{ PreviewSession }, { EngineWorker }] = await Promise.all([import('./session'), import('../../engine/worker/workerClient')]);
    if (this.isDisposed) return;
    const doc = await vscode.workspace.openTextDocument(this.document);
    const source = this.document.toString();
    this.session = new PreviewSession({
      source,
      fileName: fileNameOf(this.document),
      post: (msg: ToPreview.Type) => {
        // A hidden webview has no page: it asks for everything again ('ready') when it is shown.
        if (this.panel.visible) void this.panel.webview.postMessage(msg);
      },
      newEngine: () => new EngineWorker(),
      analysis: this.ctx.analysis(),
      settings: () => readLiveRunSettings(this.document),
      readImage: (uri, range) => this.readImage(uri, range),
      recallNamedInputs: () => this.ctx.memory.get(namedInputsKey(this.document)),
      rememberNamedInputs: (choices) => void this.ctx.memory.update(namedInputsKey(this.document), choices),
      recallInput: () => validInput(this.ctx.memory.get(inputKey(this.document))),
      rememberInput: (input: InputChoice) => void this.ctx.memory.update(inputKey(this.document), input),
      recallKnobs: () => this.ctx.memory.get(knobsKey(this.document)),
      rememberKnobs: (knobs) => void this.ctx.memory.update(knobsKey(this.document), knobs),
      recallPinned: () => this.ctx.memory.get(pinnedKey(this.document)),
      rememberPinned: (stored) => void this.ctx.memory.update(pinnedKey(this.document), stored ?? undefined),
      pickImage: async () => {
        const picked = await vscode.window.showOpenDialog({
          canSelectMany: false, openLabel: 'Run on this image',
          filters: { Images: ['png', 'jpg', 'jpeg', 'tif', 'tiff', 'pgm', 'pfm'] },
          defaultUri: vscode.workspace.getWorkspaceFolder(this.document)?.uri,
        });
        return picked?.[0]?.toString() ?? null;
      },
      applyEdits: (edits, text) => this.applyEdits(edits, text),
      reveal: (range) => void this.reveal(range),
      log: this.ctx.log,
      fit: (job, signal, onEvaluation) => runKnobFit(job, signal, onEvaluation),
      offerWrite: async (summary) => (await vscode.window.showInformationMessage(summary, WRITE_FIT)) === WRITE_FIT,
    });
    this.session.documentChanged(doc.getText());
  }

  private async readImage(uri: string, range?: { lo: number; hi: number }): Promise<GreyPicture> {
    // Read through the workspace file system (remote and virtual folders too); decoded in the analysis thread.
    const bytes = await vscode.workspace.fs.readFile(vscode.Uri.parse(uri, true));
    return this.ctx.analysis().decode(bytes, range);
  }

  /** Writes knob values as one undoable edit, only if the document still holds the text they were computed on. */
  private async applyEdits(edits: readonly OffsetEdit[], text: string): Promise<boolean> {
    const doc = await vscode.workspace.openTextDocument(this.document);
    if (doc.getText() !== text) return false;
    const we = new vscode.WorkspaceEdit();
    for (const e of edits) we.replace(doc.uri, new vscode.Range(doc.positionAt(e.start), doc.positionAt(e.end)), e.newText);
    return vscode.workspace.applyEdit(we);
  }

  /** Shows the scheme with `range` selected, in the editor column that already shows it (or beside the panel). */
  async reveal(range: WireRange | null): Promise<void> {
    const doc = await vscode.workspace.openTextDocument(this.document);
    const shown = vscode.window.visibleTextEditors.find((e) => e.document.uri.toString() === this.document.toString());
    const column = shown?.viewColumn ?? (this.panel.viewColumn === vscode.ViewColumn.One ? vscode.ViewColumn.Two : vscode.ViewColumn.One);
    const editor = await vscode.window.showTextDocument(doc, { viewColumn: column, preserveFocus: false, preview: false });
    if (!range) return;
    const sel = new vscode.Selection(range.start.line - 1, range.start.column - 1, range.end.line - 1, range.end.column - 1);
    editor.selection = sel;
    editor.revealRange(sel, vscode.TextEditorRevealType.InCenterIfOutsideViewport);
  }

  private droppedCount = 0;

  /** Logs a message from the page that was ignored (the first 20 in full, then every 100th), never acting on it. */
  private dropped(raw: unknown, why: string): void {
    this.droppedCount++;
    if (this.droppedCount > 20 && this.droppedCount % 100 !== 0) return;
    let text: string;
    try {
      text = JSON.stringify(raw) ?? String(raw);
    } catch {
      text = Object.prototype.toString.call(raw);
    }
    if (text.length > 200) text = `${text.slice(0, 200)}…`;
    this.ctx.log(`live run: dropped a message from the page (${why}; ${this.droppedCount} so far): ${text}`);
  }

  /** For tests: the session once loaded. */
  async sessionReady(): Promise<PreviewSession | null> {
    await this.ready;
    return this.session;
  }

  override dispose(): void {
    if (this.isDisposed) return;
    this.session?.dispose();
    this.session = null;
    this.disposeEmitter.fire();
    super.dispose();
    this.panel.dispose();
  }
}
