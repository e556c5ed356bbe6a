// Real-editor tests of the live run's "see why" views: the frequency map of a scheme over its limit (map, colour
// bar, the stable region's edge, the modified-equation line), the influence map of a picked pixel of an
// edge-preserving scheme laid over its input, and an A/B comparison whose pinned result survives an edit of the
// file. Screenshots of the panel are saved as test/out/editor/frequency-map.png and influence-map.png (copied to
// docs/ by test/tools/why-screenshots.sh). Browser facts come from the driver's "liverun" probe
// (test/tools/preview-probe.mjs). Registered one microtask after load, so they run after the live run tests.

import * as assert from 'node:assert/strict';
import * as vscode from 'vscode';
import { info, poll, probe, test } from './harness';
import { heatScheme, workspaceFile } from './workspace';

async function openWithLiveRun(name: string, text?: string): Promise<vscode.TextEditor> {
  const uri = workspaceFile(name);
  if (text !== undefined) await vscode.workspace.fs.writeFile(uri, Buffer.from(text, 'utf8'));
  const editor = await vscode.window.showTextDocument(await vscode.workspace.openTextDocument(uri), { preview: false, viewColumn: vscode.ViewColumn.One });
  const viewType = await vscode.commands.executeCommand<string>('fluxel.openLiveRunBeside', uri);
  assert.equal(viewType, 'fluxel.liveRun', 'the command opened the live run panel');
  return editor;
}

interface Facts { runId: string; frames: string; status: string; pinned: string; comparison: string; influence: string; approximates: string }

function register(): void {
  test('the frequency map of a scheme over its limit shows |G| with a colour bar and the stable edge', async () => {
    await vscode.commands.executeCommand('workbench.action.closeAllEditors');
    // dt 0.3 over the 5-point limit 0.25: |G| reaches |1 − 8·0.3| = 1.4 at (π, π), inside an edge where |G| = 1.
    await openWithLiveRun('heat-over.fluxel', heatScheme('0.3'));
    const s = await probe<{ mapColours: number; barColours: number; barContrast: number; edgePixels: number; text: string; iso: boolean; approximates: string; shot: { path: string; colours: number } }>(
      'liverun', JSON.stringify({ action: 'spectrum', name: 'frequency-map' }));
    info(`frequency map: ${s.mapColours} colours in the map, ${s.barColours} in the colour bar (top–bottom contrast ${s.barContrast}), ${s.edgePixels} edge pixels; "${s.text}"; ${s.approximates}; screenshot ${s.shot.path} with ${s.shot.colours} colours`);
    assert.ok(s.mapColours > 30, `the map is not uniform (${s.mapColours} colours)`);
    assert.ok(s.barColours > 30 && s.barContrast > 150, `a colour bar runs from dark to light (${s.barColours} colours, contrast ${s.barContrast})`);
    assert.ok(s.edgePixels > 20, `the stable region's edge is drawn (${s.edgePixels} pixels)`);
    assert.match(s.text, /^largest \|G\| 1\.4 at θ = \((−?π), (−?π)\)/);
    assert.ok(s.iso, 'the isotropy curve is shown');
    assert.match(s.approximates, /Δu/, 'the modified-equation line names the Laplacian');
    assert.ok(s.shot.colours > 50, 'the screenshot has content');
  });

  test('the influence map of a picked pixel lies over the input and changes the picture around it', async () => {
    await openWithLiveRun('edge-preserving.fluxel');
    const r = await probe<{ influence: string; meanDiff: number; coloured: number; pixels: number; legend: string; readout: string; shot: { path: string; colours: number } }>(
      'liverun', JSON.stringify({ action: 'influence', pick: [0.55, 0.5], zoom: 7, name: 'influence-map' }));
    info(`influence at ${r.influence}: mean |overlay − plain| ${r.meanDiff.toFixed(1)} per pixel near the pick, ${r.coloured} of ${r.pixels} pixels coloured; "${r.readout}"; legend "${r.legend}"; screenshot ${r.shot.path}`);
    assert.match(r.readout, /^influence of the input on u at \(\d+, \d+\), step \d+ \(\d+ steps\): sum [\d.]+, largest /);
    assert.ok(r.meanDiff > 20, `the overlay changes the picture around the picked pixel (${r.meanDiff})`);
    assert.ok(r.coloured > 20, `the map is drawn in colour around the picked pixel (${r.coloured} pixels)`);
    assert.match(r.legend, /^influence −[\d.e−]+ … 0 … \+[\d.e−]+ over the input$/);
    assert.ok(r.shot.colours > 50, 'the screenshot has content');
  });

  test('a pinned result survives an edit of the file and is compared with the new run', async () => {
    const editor = await openWithLiveRun('heat-ab.fluxel', heatScheme('0.1'));
    const pinned = await probe<Facts>('liverun', JSON.stringify({ action: 'pin', step: 40 }));
    assert.equal(pinned.pinned, '40', 'the last step is pinned');
    // Change the scheme: a larger step smooths more in the same 40 steps.
    const edit = new vscode.WorkspaceEdit();
    const line = editor.document.getText().split('\n').findIndex((l) => l.startsWith('step dt'));
    edit.replace(editor.document.uri, editor.document.lineAt(line).range, 'step dt = 0.2 in [0.02, 0.3]');
    assert.ok(await vscode.workspace.applyEdit(edit));
    const ab = await probe<Facts & { visible: boolean; counts: number[]; rows: string[][]; between: string; label: string }>('liverun', JSON.stringify({ action: 'ab', notRun: pinned.runId }));
    info(`A/B: ${ab.label}; ${ab.rows.map((r) => r.join(' | ')).join(' / ')}; ${ab.between}; colours ${ab.counts.join(', ')}`);
    assert.ok(ab.visible, 'the A/B section is shown');
    assert.equal(ab.pinned, '40', 'the pin is still there after the edit');
    assert.notEqual(ab.runId, pinned.runId, 'a new run is compared');
    assert.match(ab.label, /^pinned: step 40 · dt = 0\.1 · /);
    const [, psnr, ssim, tv] = ab.rows;
    assert.equal(psnr[0], 'PSNR');
    assert.match(psnr[3], /^[+−][\d.]+ dB$/, `a PSNR delta (${psnr.join(' | ')})`);
    assert.match(ssim[3], /^[+−][\d.]+$/, `an SSIM delta (${ssim.join(' | ')})`);
    // More smoothing lowers the total variation (common practice for the heat equation).
    assert.match(tv[3], /^−[\d.]+$/, `TV went down (${tv.join(' | ')})`);
    assert.match(ab.between, /^now \(step 40\) against pinned: PSNR [\d.]+ dB, SSIM [\d.]+$/);
    assert.ok(ab.counts.every((n) => n > 10), `all three A/B pictures are drawn (${ab.counts.join(', ')})`);
    await vscode.window.showTextDocument(editor.document, { preview: false, viewColumn: vscode.ViewColumn.One });
    await vscode.commands.executeCommand('undo');
    await poll('the file as it was', () => editor.document.getText() === heatScheme('0.1'));
    await editor.document.save();
    await vscode.commands.executeCommand('workbench.action.closeAllEditors');
  });
}

queueMicrotask(register);
