// The palette commands (category "Fluxel"): check the scheme, show stability details, run once, run to an image
// file, show kernel weights at a pixel, show the log. Each returns a Disposable from registerCommands.

import * as vscode from 'vscode';
import type { Core } from './core';
import type { StabilityDetails } from './details';
import type { DiagnosticManager } from './diagnostics';
import { LANGUAGE_ID } from './diagnostics';
import type { SchemeRunner } from './runner';
import { RUN_ONCE_COMMAND, SHOW_LOG_COMMAND } from './codeLens';
import { SHOW_DETAILS_COMMAND } from './status';
import { writeAtomically } from './exportCommand';

export interface CommandContext {
  readonly manager: DiagnosticManager;
  readonly details: StabilityDetails;
  readonly runner: SchemeRunner;
  readonly loadCore: () => Promise<Core>;
  readonly output: vscode.OutputChannel;
}

async function schemeDocument(arg: unknown): Promise<vscode.TextDocument | undefined> {
  if (arg instanceof vscode.Uri) return vscode.workspace.openTextDocument(arg);
  const doc = vscode.window.activeTextEditor?.document;
  if (doc && doc.languageId === LANGUAGE_ID) return doc;
  void vscode.window.showWarningMessage('Open a .fluxel scheme first.');
  return undefined;
}

export function registerCommands(c: CommandContext): vscode.Disposable {
  const reg = vscode.commands.registerCommand;
  return vscode.Disposable.from(
    reg('fluxel.checkScheme', async (arg?: unknown) => {
      const doc = await schemeDocument(arg);
      if (!doc) return undefined;
      const s = await c.manager.checkNow(doc);
      await c.details.show(doc.uri);
      return s?.report ?? null;
    }),
    reg(SHOW_DETAILS_COMMAND, async (arg?: unknown) => {
      const doc = await schemeDocument(arg);
      if (doc) await c.details.show(doc.uri);
    }),
    reg(RUN_ONCE_COMMAND, async (arg?: unknown) => {
      const doc = await schemeDocument(arg);
      if (!doc) return undefined;
      const s = await c.runner.run(doc);
      return s.line;
    }),
    reg(SHOW_LOG_COMMAND, () => c.output.show(true)),
    reg('fluxel.runToFile', async (arg?: unknown) => {
      const doc = await schemeDocument(arg);
      if (!doc) return;
      const target = await vscode.window.showSaveDialog({
        title: 'Fluxel: write the last frame',
        filters: { 'PNG image': ['png'], 'Portable float map': ['pfm'], 'PGM image': ['pgm'], 'TIFF image': ['tif', 'tiff'] },
        defaultUri: doc.uri.with({ path: doc.uri.path.replace(/\.fluxel$/, '') + '.png' }),
      });
      if (!target) return;
      const core = await c.loadCore();
      const format = core.formatFromExtension(target.path);
      if (!format) { void vscode.window.showErrorMessage('Fluxel writes .png, .pfm, .pgm or .tif files.'); return; }
      const s = await vscode.window.withProgress({ location: vscode.ProgressLocation.Window, title: 'Fluxel: running' }, () => c.runner.run(doc));
      const field = s.primary && s.outcome ? s.outcome.fields[s.primary] : undefined;
      if (!field) { void vscode.window.showErrorMessage(`Fluxel: ${s.line}`); return; }
      const bytes = core.encodeImage({ width: field.width, height: field.height, data: Float32Array.from(field.data) }, format);
      // The save dialog asked before replacing; the frame goes to a temporary file that is renamed over the target,
      // so an existing image is replaced only by a complete one.
      await writeAtomically(target, bytes, true);
      c.output.appendLine(`wrote ${s.primary} to ${target.fsPath}`);
    }),
    reg('fluxel.showWeightsAtPixel', async (arg?: unknown) => {
      const doc = await schemeDocument(arg);
      if (!doc) return undefined;
      const core = await c.loadCore();
      const checked = core.parseAndCheck(doc.getText());
      if (!checked.scheme) { void vscode.window.showWarningMessage('Fluxel: fix the errors first; weights need a checked scheme.'); return undefined; }
      const scheme = checked.scheme;
      const state = core.initialState(scheme);
      const answer = typeof arg === 'string' ? arg : await vscode.window.showInputBox({
        title: 'Fluxel: weights at which pixel of the initial state?',
        prompt: `x, y within ${state.width}×${state.height} (the default scene for image fields)`,
        value: `${state.width >> 1}, ${state.height >> 1}`,
        validateInput: (v) => (/^\s*\d+\s*(,\s*\d+\s*)?$/.test(v) ? undefined : 'Write x, y (whole numbers)'),
      });
      if (!answer) return undefined;
      const [x, y = 0] = answer.split(',').map((v) => Number(v.trim()));
      const k = core.kernelAt(scheme, state, Math.min(x, state.width - 1), Math.min(y, state.height - 1));
      const n = 2 * k.radius + 1;
      const rows: string[] = [];
      for (let r = 0; r < (scheme.dims === 1 ? 1 : n); r++) {
        rows.push(Array.from(k.grid.slice(r * n, r * n + n), (w) => (w === 0 ? '·' : w.toFixed(4)).padStart(8)).join(' '));
      }
      c.output.appendLine(`weights of ${k.field}' at (${k.x}, ${k.y}), step 0 — sum ${k.sum.toFixed(4)}, centre ${k.centre.toFixed(4)}${k.negativeCentre ? ' (negative!)' : ''}`);
      for (const row of rows) c.output.appendLine(row);
      c.output.show(true);
      return k;
    }),
  );
}
