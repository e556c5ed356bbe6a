// The real-editor suite: runs inside VS Code's extension host with the packaged extension installed, and checks
// through the editor itself what a user sees: token colours, diagnostics at exact ranges, the dt quick fix and its
// undo, hovers (limit, diffusivity plot), the verdict in the status bar, the run lens, and a screenshot; the live run
// (preview.ts) and the export command (export.ts) have their own files.
// Entry point compatible with @vscode/test-electron: `run()` resolves when every test passed.

import * as assert from 'node:assert/strict';
import * as vscode from 'vscode';
import { info, poll, probe, runAll, test } from './harness';
import { heatScheme, workspaceFile } from './workspace';
import './preview';
import './why';
import './export';

const EXTENSION_ID = 'fluxel-dev.fluxel';

async function writeScheme(name: string, text: string): Promise<vscode.TextEditor> {
  const uri = workspaceFile(name);
  await vscode.workspace.fs.writeFile(uri, Buffer.from(text, 'utf8'));
  const doc = await vscode.workspace.openTextDocument(uri);
  assert.equal(doc.languageId, 'fluxel', `${name} opens as a Fluxel scheme`);
  return vscode.window.showTextDocument(doc, { preview: false });
}

function fluxelDiagnostics(uri: vscode.Uri, code?: string): vscode.Diagnostic[] {
  return vscode.languages.getDiagnostics(uri).filter((d) => d.source === 'fluxel' && (!code || d.code === code));
}

function hoverText(hovers: vscode.Hover[]): string {
  return hovers.flatMap((h) => h.contents.map((c) => (typeof c === 'string' ? c : c.value))).join('\n');
}

test('the extension activates on opening a scheme and reports its activation time', async () => {
  await writeScheme('heat-check.fluxel', heatScheme('0.2'));
  const ext = vscode.extensions.getExtension<{ activationMs: number; coreLoadMs(): number | null; analysisThread(): string | null }>(EXTENSION_ID);
  assert.ok(ext, 'the packaged extension is installed');
  const api = await poll('activation', () => ext.isActive && ext.exports);
  assert.equal(typeof api.activationMs, 'number');
  await poll('the first check', () => api.coreLoadMs() !== null);
  assert.equal(await poll('the first analysis', () => api.analysisThread()), 'worker', 'the stability analysis runs in its worker thread, off the host');
  info(`activation (our clock): ${api.activationMs.toFixed(1)} ms in activate(); parser/checker/analysis loaded afterwards in ${api.coreLoadMs()!.toFixed(1)} ms`);
  // The editor's own measurement, as "Developer: Show Running Extensions" shows it.
  await vscode.commands.executeCommand('workbench.action.showRuntimeExtensions');
  const row = await probe<{ text: string | null; others: string[] }>('row', 'Fluxel');
  if (row.text) info(`Running Extensions: ${row.text}`);
  else info(`Running Extensions did not list Fluxel this time (rows seen: ${row.others.join(' / ')})`);
  await vscode.commands.executeCommand('workbench.action.closeActiveEditor');
});

test('the grammar colours keywords, numbers, comments and names differently', async () => {
  await vscode.window.showTextDocument(await vscode.workspace.openTextDocument(workspaceFile('edge-preserving.fluxel')), { preview: false });
  const { spans } = await probe<{ spans: { text: string; color: string }[] }>('tokens');
  const colourOf = (text: string): string => {
    const s = spans.find((x) => x.text.trim() === text);
    assert.ok(s, `a token "${text}" is on screen (saw: ${spans.slice(0, 40).map((x) => x.text).join('|')})`);
    return s.color;
  };
  const keyword = colourOf('grid');
  const number = colourOf('0.06');
  const comment = spans.find((x) => x.text.startsWith('#'))?.color;
  const name = colourOf('K');
  assert.ok(comment, 'a comment is on screen');
  assert.equal(new Set([keyword, number, comment, name]).size, 4, `four distinct colours: keyword ${keyword}, number ${number}, comment ${comment}, name ${name}`);
  assert.equal(colourOf('param'), keyword, 'declaration keywords share one colour');
});

test('a broken line gives a diagnostic at the exact range', async () => {
  const editor = await writeScheme('broken.fluxel', heatScheme('0.2').replace("u' = u + dt / h^2", "u' = u + dtt / h^2"));
  const uri = editor.document.uri;
  const [d] = await poll('the unknown-name diagnostic', () => { const ds = fluxelDiagnostics(uri, 'unknown-name'); return ds.length ? ds : null; });
  assert.equal(d.severity, vscode.DiagnosticSeverity.Error);
  assert.match(d.message, /dtt/);
  const line = editor.document.lineAt(9).text;
  const col = line.indexOf('dtt');
  assert.ok(d.range.isEqual(new vscode.Range(9, col, 9, col + 3)), `range ${JSON.stringify(d.range)} is line 10, columns ${col + 1}–${col + 4}`);
  // The suggested replacement is offered and applies.
  const actions = await vscode.commands.executeCommand<vscode.CodeAction[]>('vscode.executeCodeActionProvider', uri, d.range, vscode.CodeActionKind.QuickFix.value);
  const replace = actions.find((a) => a.title.includes('by `dt`'));
  assert.ok(replace?.edit, `a fix replacing by dt (saw ${actions.map((a) => a.title).join('; ')})`);
  assert.ok(await vscode.workspace.applyEdit(replace.edit));
  await poll('the error to go away', () => fluxelDiagnostics(uri, 'unknown-name').length === 0);
});

test('the dt quick fix sets dt to the limit, and undo restores the file', async () => {
  const editor = await writeScheme('heat-over.fluxel', heatScheme('0.3'));
  const doc = editor.document;
  const original = doc.getText();
  const [d] = await poll('the over-the-limit warning', () => { const ds = fluxelDiagnostics(doc.uri, 'step-over-limit'); return ds.length ? ds : null; });
  assert.equal(d.range.start.line, 4, 'on the step line');
  assert.ok(d.relatedInformation?.some((r) => r.location.range.start.line === 9), 'related information points at the update');
  const actions = await vscode.commands.executeCommand<vscode.CodeAction[]>('vscode.executeCodeActionProvider', doc.uri, d.range, vscode.CodeActionKind.QuickFix.value);
  const titles = actions.map((a) => a.title);
  assert.ok(titles.includes('Set dt to 90% of the limit (0.225)'), `safety-fraction fix offered (saw ${titles.join('; ')})`);
  const toLimit = actions.find((a) => a.title === 'Set dt to the stable limit (0.25)');
  assert.ok(toLimit?.edit, 'the set-to-limit fix is offered');
  assert.ok(await vscode.workspace.applyEdit(toLimit.edit));
  assert.equal(doc.lineAt(4).text, 'step dt = 0.25 in [0.02, 0.3]');
  await poll('the warning to clear', () => fluxelDiagnostics(doc.uri, 'step-over-limit').length === 0);
  await vscode.window.showTextDocument(doc);
  await vscode.commands.executeCommand('undo');
  await poll('undo to restore the file', () => doc.getText() === original);
  await poll('the warning to come back', () => fluxelDiagnostics(doc.uri, 'step-over-limit').length === 1);
});

test('the hover on dt shows the limit, the method and the reason', async () => {
  const doc = await vscode.workspace.openTextDocument(workspaceFile('heat-over.fluxel'));
  const pos = new vscode.Position(4, doc.lineAt(4).text.indexOf('dt') + 1);
  const text = await poll('a hover with the limit', async () => {
    const t = hoverText(await vscode.commands.executeCommand<vscode.Hover[]>('vscode.executeHoverProvider', doc.uri, pos));
    return t.includes('dt ≤ 0.25') ? t : null;
  });
  assert.match(text, /over the limit/);
  assert.match(text, /von Neumann/);
});

test('the status bar shows the verdict of the active scheme', async () => {
  const editor = await vscode.window.showTextDocument(await vscode.workspace.openTextDocument(workspaceFile('heat-over.fluxel')), { preview: false });
  const over = await probe<{ text: string }>('status', 'over the limit');
  assert.match(over.text, /over the limit · dt 0\.3 \/ 0\.25/);
  await vscode.window.showTextDocument(await vscode.workspace.openTextDocument(workspaceFile('heat-check.fluxel')), { preview: false });
  const within = await probe<{ text: string }>('status', 'within limit');
  assert.match(within.text, /within limit · dt 0\.2 \/ 0\.25/);
  assert.ok(editor.document.languageId === 'fluxel');
});

test('the hover on a diffusivity shows its flux peak and an inline plot', async () => {
  const doc = await vscode.workspace.openTextDocument(workspaceFile('edge-preserving.fluxel'));
  const line = doc.getText().split('\n').findIndex((l) => l.startsWith('diffusivity'));
  const pos = new vscode.Position(line, 'diffusivity g'.length - 1);
  const text = await poll('a diffusivity hover with facts', async () => {
    const t = hoverText(await vscode.commands.executeCommand<vscode.Hover[]>('vscode.executeHoverProvider', doc.uri, pos));
    return t.includes('peaks at') ? t : null;
  });
  assert.match(text, /peaks at s = 0\.06/);
  assert.match(text, /!\[plot of g\(s\)[^\]]*\]\(data:image\/svg\+xml;base64,/);
});

test('the run lens runs the scheme once through the engine and reports the result', async () => {
  const doc = await vscode.workspace.openTextDocument(workspaceFile('heat-check.fluxel'));
  const lenses = await poll('the run lens', async () => {
    const ls = await vscode.commands.executeCommand<vscode.CodeLens[]>('vscode.executeCodeLensProvider', doc.uri);
    return ls.length ? ls : null;
  });
  const run = lenses.find((l) => l.command?.command === 'fluxel.runOnce');
  assert.ok(run?.command, 'a Run once lens');
  assert.equal(run.range.start.line, 9, 'above the update');
  const line = await vscode.commands.executeCommand<string>(run.command.command, ...(run.command.arguments ?? []));
  assert.match(line, /^Ran 40\/40 steps on a \d+×\d+ survey tile/);
  const after = await poll('the result lens', async () => {
    const ls = await vscode.commands.executeCommand<vscode.CodeLens[]>('vscode.executeCodeLensProvider', doc.uri);
    return ls.find((l) => l.command?.title.startsWith('Ran 40/40'));
  });
  info(`run lens: ${after.command!.title}`);
});

test('a screenshot shows a diagnostic and a hover, and is not blank', async () => {
  const editor = await vscode.window.showTextDocument(await vscode.workspace.openTextDocument(workspaceFile('heat-over.fluxel')), { preview: false });
  await poll('the warning', () => fluxelDiagnostics(editor.document.uri, 'step-over-limit').length === 1);
  const pos = new vscode.Position(4, editor.document.lineAt(4).text.indexOf('dt') + 1);
  editor.selection = new vscode.Selection(pos, pos);
  await vscode.commands.executeCommand('editor.action.showHover');
  const shot = await probe<{ path: string; colours: number; hoverText: string; squiggles: number; width: number }>('shot', 'diagnostic-and-hover');
  info(`screenshot ${shot.path}: ${shot.width} px wide, ${shot.colours} colours, ${shot.squiggles} squiggle(s)`);
  assert.ok(shot.colours > 50, `the screenshot has many colours (${shot.colours}), so it is not blank`);
  assert.ok(shot.squiggles >= 1, 'a squiggle is drawn');
  assert.match(shot.hoverText, /limit/);
});

test('the diffusivity hover draws its plot in the editor', async () => {
  const editor = await vscode.window.showTextDocument(await vscode.workspace.openTextDocument(workspaceFile('edge-preserving.fluxel')), { preview: false });
  const line = editor.document.getText().split('\n').findIndex((l) => l.startsWith('diffusivity'));
  const pos = new vscode.Position(line, 'diffusivity g'.length - 1);
  editor.selection = new vscode.Selection(pos, pos);
  await vscode.commands.executeCommand('editor.action.showHover');
  const shot = await probe<{ colours: number; hoverText: string; hoverImages: number }>('shot', 'diffusivity-hover');
  assert.match(shot.hoverText, /flux s·g\(s\) peaks at s = 0\.06/);
  assert.equal(shot.hoverImages, 1, 'one loaded SVG plot in the hover');
});

export async function run(): Promise<void> {
  const { failed } = await runAll();
  if (failed > 0) throw new Error(`${failed} editor test(s) failed`);
}
