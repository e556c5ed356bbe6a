// The "Export Scheme as Code…" command (fluxel.exportScheme): checks the active scheme, asks the target and the
// storage type, builds the code from the document's current text (exportPlan.ts, loaded on first use) and writes
// it next to the scheme through a temporary file and a rename, asking before it replaces an existing file; then
// opens the result beside. Its temporary-file writer also serves Run Scheme to Image File (commands.ts).
// Reads vscode members only inside the command, never at load time.

import * as vscode from 'vscode';
import type { Target } from '../export/index';
import { LANGUAGE_ID } from './diagnostics';

export const EXPORT_COMMAND = 'fluxel.exportScheme';

/** Optional arguments (for keybindings and tests); each one given skips its question. */
export interface ExportArgs {
  readonly uri?: vscode.Uri;
  readonly target?: Target;
  readonly float64?: boolean;
  /** What to do when the output file exists: true replaces it, false keeps it; unset asks. */
  readonly replace?: boolean;
}

export interface ExportResult {
  readonly status: 'written' | 'kept' | 'cancelled' | 'refused';
  /** The output file (written, or kept as it was). */
  readonly file?: string;
  readonly message?: string;
}

function readArgs(a: unknown, b: unknown): ExportArgs {
  const plain = (v: unknown): v is Record<string, unknown> => !!v && typeof v === 'object' && !(v instanceof vscode.Uri) && !Array.isArray(v);
  if (a instanceof vscode.Uri) return { ...(plain(b) ? b : {}), uri: a };
  return plain(a) ? (a as ExportArgs) : {};
}

function refuse(message: string, doc?: vscode.TextDocument, line?: number | null): ExportResult {
  if (doc && line) {
    void vscode.window.showErrorMessage(`Fluxel: ${message}`, 'Go to Line').then(async (choice) => {
      if (choice !== 'Go to Line') return;
      const editor = await vscode.window.showTextDocument(doc);
      const at = new vscode.Position(Math.max(0, line - 1), 0);
      editor.selection = new vscode.Selection(at, at);
      editor.revealRange(new vscode.Range(at, at), vscode.TextEditorRevealType.InCenterIfOutsideViewport);
    });
  } else {
    void vscode.window.showErrorMessage(`Fluxel: ${message}`);
  }
  return { status: 'refused', message };
}

async function exists(uri: vscode.Uri): Promise<boolean> {
  try {
    await vscode.workspace.fs.stat(uri);
    return true;
  } catch {
    return false;
  }
}

/** Writes `bytes` to a temporary file beside `target` and renames it over, so `target` changes only on success. */
export async function writeAtomically(target: vscode.Uri, bytes: Uint8Array, replace: boolean): Promise<void> {
  const name = target.path.slice(target.path.lastIndexOf('/') + 1);
  const tmp = target.with({ path: `${target.path.slice(0, target.path.lastIndexOf('/'))}/.${name}.${Date.now().toString(36)}${Math.random().toString(36).slice(2, 8)}.tmp` });
  try {
    await vscode.workspace.fs.writeFile(tmp, bytes);
    // Without `replace`, a file that appeared since we looked makes the rename fail rather than being replaced.
    await vscode.workspace.fs.rename(tmp, target, { overwrite: replace });
  } catch (err) {
    try { await vscode.workspace.fs.delete(tmp, { useTrash: false }); } catch { /* it was never written */ }
    throw err;
  }
}

async function exportCommand(a: unknown, b: unknown, log: (line: string) => void): Promise<ExportResult> {
  const args = readArgs(a, b);
  const doc = args.uri ? await vscode.workspace.openTextDocument(args.uri) : vscode.window.activeTextEditor?.document;
  if (!doc || doc.languageId !== LANGUAGE_ID) return refuse('open a .fluxel scheme to export it.');
  if (doc.isUntitled) return refuse('save the scheme first; the export is written next to it.');
  const schemeName = doc.uri.path.slice(doc.uri.path.lastIndexOf('/') + 1);
  const plan = await import('./exportPlan');

  const problem = plan.schemeProblem(doc.getText(), schemeName);
  if (problem) return refuse(problem.message, doc, problem.line);

  let target = plan.isTarget(args.target) ? args.target : undefined;
  if (!target) {
    const picked = await vscode.window.showQuickPick(
      plan.TARGET_CHOICES.map((c) => ({ label: c.label, description: plan.exportFileName(schemeName, c.target), detail: c.description, target: c.target })),
      { title: `Fluxel: Export ${schemeName} as Code`, placeHolder: 'Target language' },
    );
    if (!picked) return { status: 'cancelled' };
    target = picked.target;
  }
  let float64 = typeof args.float64 === 'boolean' ? args.float64 : undefined;
  if (float64 === undefined) {
    const picked = await vscode.window.showQuickPick(
      [
        { label: 'Float32', description: 'default', detail: 'Fields stored as 32-bit floats (arithmetic in double), as the live run and the fluxel run command do', float64: false },
        { label: 'Float64', description: '--float64', detail: 'Fields stored as 64-bit floats', float64: true },
      ],
      { title: `Fluxel: Export ${schemeName} as ${plan.targetLabel(target)}`, placeHolder: 'Storage type of the fields' },
    );
    if (!picked) return { status: 'cancelled' };
    float64 = picked.float64;
  }

  // The text as it is now (unsaved edits included), read after the questions.
  const built = plan.buildExport(doc.getText(), schemeName, target, float64 ? 'float64' : 'float32');
  if (!built.ok) return refuse(built.message, doc, built.line);
  const out = doc.uri.with({ path: `${doc.uri.path.slice(0, doc.uri.path.lastIndexOf('/'))}/${built.fileName}` });

  const existed = await exists(out);
  if (existed) {
    let replace = args.replace;
    if (replace === undefined) {
      const answer = await vscode.window.showWarningMessage(
        `${built.fileName} already exists next to the scheme. Replace it?`,
        { modal: true, detail: `The ${plan.targetLabel(target)} export of ${schemeName} would replace its contents.` },
        'Replace',
      );
      replace = answer === 'Replace';
      if (!replace) return { status: 'cancelled', file: out.fsPath };
    }
    if (!replace) return { status: 'kept', file: out.fsPath };
  }
  try {
    await writeAtomically(out, new TextEncoder().encode(built.code), existed);
  } catch (err) {
    const message = `could not write ${built.fileName}: ${err instanceof Error ? err.message : String(err)}`;
    log(`export: ${message}`);
    return refuse(message);
  }
  log(`exported ${schemeName} to ${out.fsPath} (${plan.targetLabel(target)}, ${float64 ? 'float64' : 'float32'} storage)`);
  await vscode.window.showTextDocument(out, { viewColumn: vscode.ViewColumn.Beside, preview: false });
  return { status: 'written', file: out.fsPath };
}

export function registerExportCommand(log: (line: string) => void): vscode.Disposable {
  return vscode.commands.registerCommand(EXPORT_COMMAND, (a?: unknown, b?: unknown) => exportCommand(a, b, log));
}
