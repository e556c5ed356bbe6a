// The stability details of a scheme as a read-only Markdown document (scheme `fluxel-details:`), opened beside the
// editor by the status item and the "Show Stability Details" command.

import * as vscode from 'vscode';
import type { DiagnosticManager } from './diagnostics';
import { Disposable } from './util/dispose';
import { detailsMarkdown } from './verdict';

export const DETAILS_SCHEME = 'fluxel-details';

export class StabilityDetails extends Disposable implements vscode.TextDocumentContentProvider {
  private readonly changed = this._register(new vscode.EventEmitter<vscode.Uri>());
  readonly onDidChange = this.changed.event;

  constructor(private readonly manager: DiagnosticManager) {
    super();
    this._register(vscode.workspace.registerTextDocumentContentProvider(DETAILS_SCHEME, this));
    this._register(manager.onDidChangeState((s) => this.changed.fire(detailsUri(s.uri))));
  }

  provideTextDocumentContent(uri: vscode.Uri): string {
    const source = vscode.Uri.parse(decodeURIComponent(uri.query));
    const s = this.manager.latest(source);
    const name = source.path.split('/').pop() ?? 'scheme';
    if (!s) return `# Stability of ${name}\n\nNot checked yet: open the scheme.\n`;
    if (s.analysis === 'off') return `# Stability of ${name}\n\nThe stability analysis is switched off (setting fluxel.analysis.enabled).\n`;
    if (!s.report) {
      const errors = s.diagnostics.filter((d) => d.severity === 'error');
      return `# Stability of ${name}\n\n${errors.length ? `The scheme has ${errors.length} error(s); the analysis runs once they are fixed.` : 'Analysis running…'}\n`;
    }
    return detailsMarkdown(name, s.report);
  }

  async show(source: vscode.Uri): Promise<void> {
    const doc = await vscode.workspace.openTextDocument(detailsUri(source));
    await vscode.languages.setTextDocumentLanguage(doc, 'markdown');
    await vscode.window.showTextDocument(doc, { viewColumn: vscode.ViewColumn.Beside, preserveFocus: true, preview: true });
  }
}

export function detailsUri(source: vscode.Uri): vscode.Uri {
  const name = source.path.split('/').pop() ?? 'scheme';
  return vscode.Uri.from({ scheme: DETAILS_SCHEME, path: `/${name} stability.md`, query: encodeURIComponent(source.toString()) });
}
