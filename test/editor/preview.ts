// Real-editor tests of the live run panel: open an example and its live run, a frame that is not blank and differs
// from the input, a knob that reruns, a knob fit whose values are offered and written back, a finding of a scheme
// over its limit that moves the editor selection to the update line, and screenshots in the dark and light themes
// checked for content. Browser facts come from the driver's "liverun" probe (test/tools/preview-probe.mjs).
//
// The tests register one microtask after this module loads, so they run after the suite's other tests (which
// look at the editor without a panel beside it); the last one closes the panel and restores the theme.

import * as assert from 'node:assert/strict';
import * as vscode from 'vscode';
import { info, poll, probe, test } from './harness';
import { workspaceFile } from './workspace';

async function openWithLiveRun(name: string, text?: string): Promise<vscode.TextEditor> {
  const uri = workspaceFile(name);
  if (text !== undefined) await vscode.workspace.fs.writeFile(uri, Buffer.from(text, 'utf8'));
  const editor = await vscode.window.showTextDocument(await vscode.workspace.openTextDocument(uri), { preview: false, viewColumn: vscode.ViewColumn.One });
  const viewType = await vscode.commands.executeCommand<string>('fluxel.openLiveRunBeside', uri);
  assert.equal(viewType, 'fluxel.liveRun', 'the command opened the live run panel');
  return editor;
}

interface StateAnswer {
  check?: string;
  step: string;
  runId: string; frames: string; status: string; nowColours: number; startColours: number; changeColours: number; painted: number; meanAbsDiff: number;
  canvas: { width: number; height: number };
  attempts?: number; steady?: boolean; during?: string;
}

function register(): void {
  test('the live run shows a frame that is not blank and differs from the input', async () => {
    await openWithLiveRun('edge-preserving.fluxel');
    const s = await probe<StateAnswer>('liverun', JSON.stringify({ action: 'state', minFrames: 61, done: true }));
    info(`live run: ${s.frames} frames, canvas ${s.canvas.width}×${s.canvas.height}, ${s.nowColours} colours now, ${s.startColours} at the start, mean |now − start| ${s.meanAbsDiff.toFixed(2)} per channel`);
    assert.equal(s.status, 'done');
    assert.ok(s.painted > 0.3, `the picture covers the canvas (${s.painted})`);
    assert.ok(s.nowColours > 20, `the frame has many grey levels (${s.nowColours}), so it is not blank`);
    assert.ok(s.meanAbsDiff > 0.5, `the last frame differs from the input (${s.meanAbsDiff}; step ${s.step}; while reading: ${s.during}, ${s.attempts} reading(s); host mean | page mean | first frame mean | index | steps: ${s.check})`);
    assert.ok(s.changeColours > 5, `the change view is coloured (${s.changeColours})`);
  });

  test('moving a knob reruns the scheme and shows a new frame', async () => {
    const k = await probe<{ before: { runId: string }; after: { runId: string; frames: string }; colours: number }>('liverun', JSON.stringify({ action: 'knob', name: 'K', position: 900 }));
    assert.notEqual(k.after.runId, k.before.runId, 'a new run started');
    assert.ok(Number(k.after.frames) >= 2, 'the new run posted frames');
    assert.ok(k.colours > 20, 'the new frame is drawn');
  });

  test('the derivative chooser switches to the derivative image ∂u/∂K (computed by the host) and back to the values', async () => {
    type DerivAnswer = { before: { runId: string }; after: { runId: string; frames: string; derivative: string }; colours: number; painted: number; label: string };
    const d = await probe<DerivAnswer>('liverun', JSON.stringify({ action: 'derivative', name: 'K' }));
    info(`derivative view: run ${d.after.runId}, ${d.after.frames} frames, ${d.colours} colours; ${d.label}`);
    assert.notEqual(d.after.runId, d.before.runId, 'choosing a derivative starts a run with the tangent');
    assert.equal(d.after.derivative, 'K');
    assert.match(d.label, /^derivative ∂u\/∂K, /);
    assert.ok(d.painted > 0.3 && d.colours > 20, `the derivative picture is drawn in many colours (${d.colours})`);
    const v = await probe<DerivAnswer>('liverun', JSON.stringify({ action: 'derivative', name: '' }));
    assert.equal(v.after.derivative, '', 'back to the values');
    assert.match(v.label, /view of u, /);
  });

  test('writing the knobs into the file is one edit, and one undo takes it back', async () => {
    const editor = await vscode.window.showTextDocument(await vscode.workspace.openTextDocument(workspaceFile('edge-preserving.fluxel')), { preview: false, viewColumn: vscode.ViewColumn.One });
    const before = editor.document.getText();
    const c = await probe<{ clicked: string }>('liverun', JSON.stringify({ action: 'click', text: 'write knobs into the file' }));
    assert.match(c.clicked, /write knobs/);
    const after = await poll('the knob values in the file', () => (editor.document.getText() !== before ? editor.document.getText() : null));
    const changed = after.split('\n').filter((l, i) => l !== before.split('\n')[i]);
    info(`written: ${changed.join(' | ')}`);
    assert.deepEqual(changed.map((l) => l.split('=')[0].trim()), ['param K'], 'only the moved knob changed');
    assert.match(changed[0], /^param K = 0\.3\d* in \[0\.005, 0\.5\]$/);
    await vscode.window.showTextDocument(editor.document, { preview: false, viewColumn: vscode.ViewColumn.One });
    await vscode.commands.executeCommand('undo');
    await poll('the file as it was after one undo', () => editor.document.getText() === before);
    await editor.document.save();
  });

  test('fitting the knobs moves them to the values found and offers to write them into the file', async () => {
    // A small scene keeps the fit short; the setting is put back afterwards.
    const config = vscode.workspace.getConfiguration('fluxel.liveRun');
    const size = config.inspect<number>('sceneSize')?.globalValue;
    await config.update('sceneSize', 96, vscode.ConfigurationTarget.Global);
    try {
      const editor = await vscode.window.showTextDocument(await vscode.workspace.openTextDocument(workspaceFile('edge-preserving.fluxel')), { preview: false, viewColumn: vscode.ViewColumn.One });
      const before = editor.document.getText();
      const r = await probe<{ fit: string; line: string; fitValues: string; knobs: string }>('liverun', JSON.stringify({ action: 'fit' }));
      info(`${r.line}; knobs now ${r.knobs}`);
      assert.equal(r.fit, 'done', r.line);
      const m = /^fit: K = [-\d.e]+, sigma = [-\d.e]+ · best step \d+ · PSNR ([\d.]+) dB \(noisy input ([\d.]+) dB\)/.exec(r.line);
      assert.ok(m, `the fit line names both ranged knobs, the best step and the PSNR: ${r.line}`);
      assert.ok(Number(m[1]) > Number(m[2]), `the fitted setting beats the noisy input (${m[1]} dB vs ${m[2]} dB)`);
      const found = JSON.parse(r.fitValues) as Record<string, number>;
      assert.ok(found.K >= 0.005 && found.K <= 0.5 && found.sigma >= 0 && found.sigma <= 3, `values inside the declared ranges: ${r.fitValues}`);
      // Info toasts hide themselves after a while, so the offer is taken from the notification list.
      await vscode.commands.executeCommand('notifications.showList');
      const n = await probe<{ message: string }>('liverun', JSON.stringify({ action: 'notification', text: 'Write into the file' }));
      await vscode.commands.executeCommand('notifications.hideList');
      info(`offer: ${n.message}`);
      assert.match(n.message, /^Fit: K = /);
      const after = await poll('the fitted values in the file', () => (editor.document.getText() !== before ? editor.document.getText() : null));
      const changed = after.split('\n').filter((l, i) => l !== before.split('\n')[i]);
      info(`written: ${changed.join(' | ')}`);
      assert.ok(changed.length >= 1 && changed.every((l) => /^param (K|sigma) = [-\d.e]+ in \[/.test(l)), 'only the fitted knobs changed');
      await vscode.window.showTextDocument(editor.document, { preview: false, viewColumn: vscode.ViewColumn.One });
      await vscode.commands.executeCommand('undo');
      await poll('the file as it was after one undo', () => editor.document.getText() === before);
      await editor.document.save();
    } finally {
      await config.update('sceneSize', size, vscode.ConfigurationTarget.Global);
    }
  });

  test('while the file has errors the last run stays, dimmed, and its first error is one click away', async () => {
    const editor = await openWithLiveRun('heat-2d.fluxel');
    await probe<StateAnswer>('liverun', JSON.stringify({ action: 'state', minFrames: 41, done: true }));
    const line = editor.document.getText().split('\n').findIndex((l) => l.startsWith("u' ="));
    const broken = new vscode.WorkspaceEdit();
    broken.insert(editor.document.uri, new vscode.Position(line, "u' = u + ".length), 'zz + ');
    assert.ok(await vscode.workspace.applyEdit(broken));
    editor.selection = new vscode.Selection(0, 0, 0, 0);
    const p = await probe<{ text: string; frames: string }>('liverun', JSON.stringify({ action: 'problems' }));
    info(`first error: ${p.text}; ${p.frames} frames of the last good run kept`);
    assert.match(p.text, new RegExp(`^line ${line + 1}: `));
    assert.equal(p.frames, '41', 'the last good run is still there');
    await poll('the error selected in the editor', () => {
      const e = vscode.window.activeTextEditor;
      return e && e.document.uri.toString() === editor.document.uri.toString() && e.selection.start.line === line && !e.selection.isEmpty;
    });
    await vscode.commands.executeCommand('undo');
    await poll('the file as it was', () => !editor.document.getText().includes('zz'));
    await editor.document.save();
  });

  test('clicking a finding of an unstable scheme selects its update line in the editor', async () => {
    const text = [
      '# Heat flow with dt over its limit (0.25): the live run reports new extrema.',
      'grid 2d',
      'spacing 1',
      'boundary reflect',
      'step dt = 0.3 in [0.02, 0.3]',
      'steps 30',
      '',
      'field u = image',
      '',
      "u' = u + dt / h^2 * sum n in N4: u[n] - u",
      '',
    ].join('\n');
    const editor = await openWithLiveRun('heat-unstable.fluxel', text);
    // Put the cursor somewhere else first, so the move is the finding's doing.
    editor.selection = new vscode.Selection(1, 0, 1, 0);
    const f = await probe<{ text: string; step: string; weights: string }>('liverun', JSON.stringify({ action: 'finding' }));
    info(`finding: ${f.text}; scrubber at step ${f.step}; weights at ${f.weights}`);
    const sel = await poll('the selection on the update line', () => {
      const e = vscode.window.activeTextEditor;
      return e && e.document.uri.toString() === editor.document.uri.toString() && e.selection.start.line === 9 ? e.selection : null;
    });
    assert.ok(!sel.isEmpty, 'the range of the update is selected');
    assert.match(f.text, /step \d+ at \(\d+, \d+\)/);
    assert.ok(f.weights.length > 0, 'the finding pixel was picked and its weights arrived');
  });

  test('a 1-D scheme shows a space–time picture, one row per step', async () => {
    await openWithLiveRun('heat-1d.fluxel');
    const s = await probe<StateAnswer>('liverun', JSON.stringify({ action: 'state', minFrames: 51, done: true }));
    info(`1-D live run: ${s.frames} frames, ${s.nowColours} colours now, mean |now − start| ${s.meanAbsDiff.toFixed(2)}`);
    assert.ok(s.painted > 0.3, `the space–time picture covers the canvas (${s.painted})`);
    assert.ok(s.nowColours > 20, `it has many grey levels (${s.nowColours})`);
    assert.ok(s.meanAbsDiff > 0.5, 'rows after the first differ from the start');
  });

  test('screenshots of the live run in the dark and light themes have content', async () => {
    await openWithLiveRun('edge-preserving.fluxel');
    const config = vscode.workspace.getConfiguration('workbench');
    const before = config.get<string>('colorTheme');
    try {
      for (const [theme, name, kind] of [['Default Dark Modern', 'live-run-dark', 'dark'], ['Default Light Modern', 'live-run-light', 'light']] as const) {
        await config.update('colorTheme', theme, vscode.ConfigurationTarget.Global);
        await poll(`the ${theme} theme`, () => (theme.includes('Light') ? vscode.window.activeColorTheme.kind === vscode.ColorThemeKind.Light : vscode.window.activeColorTheme.kind === vscode.ColorThemeKind.Dark));
        const shot = await probe<{ path: string; page: { colours: number }; panel: { colours: number; width: number } }>('liverun', JSON.stringify({ action: 'shot', name, theme: kind, pick: [0.55, 0.5] }));
        info(`screenshot ${shot.path}: ${shot.page.colours} colours; the panel ${shot.panel.width} px wide with ${shot.panel.colours} colours`);
        assert.ok(shot.panel.width > 200, 'the panel is visible beside the editor');
        assert.ok(shot.panel.colours > 50, `the panel shows a picture and charts (${shot.panel.colours} colours)`);
      }
    } finally {
      await config.update('colorTheme', before, vscode.ConfigurationTarget.Global);
      await vscode.commands.executeCommand('workbench.action.closeAllEditors');
    }
  });
}

queueMicrotask(register);
