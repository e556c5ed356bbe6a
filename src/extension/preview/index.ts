// The live run feature's entry: registerPreview() registers the panel serializer and the commands that open the
// live run beside a scheme or go back to its source, and returns one Disposable for all of it.

import * as vscode from 'vscode';
import { PreviewManager } from './previewManager';

export const OPEN_LIVE_RUN = 'fluxel.openLiveRun';
export const OPEN_LIVE_RUN_BESIDE = 'fluxel.openLiveRunBeside';
export const REVEAL_SCHEME = 'fluxel.revealScheme';

function schemeUri(arg: unknown): vscode.Uri | undefined {
  if (arg instanceof vscode.Uri) return arg;
  const doc = vscode.window.activeTextEditor?.document;
  return doc && doc.languageId === 'fluxel' ? doc.uri : undefined;
}

export function registerPreview(context: vscode.ExtensionContext, log: (line: string) => void = () => undefined): vscode.Disposable {
  const manager = new PreviewManager(context, log);
  const open = (beside: boolean) => async (arg?: unknown) => {
    const uri = schemeUri(arg);
    if (!uri) {
      void vscode.window.showInformationMessage('Open a .fluxel scheme to see its live run.');
      return undefined;
    }
    const p = manager.open(uri, beside);
    return p.panel.viewType;
  };
  return vscode.Disposable.from(
    manager,
    vscode.commands.registerCommand(OPEN_LIVE_RUN, open(false)),
    vscode.commands.registerCommand(OPEN_LIVE_RUN_BESIDE, open(true)),
    vscode.commands.registerCommand(REVEAL_SCHEME, async () => {
      const p = manager.active();
      if (p) await p.reveal(null);
    }),
  );
}
