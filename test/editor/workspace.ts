// Shared fixtures of the real-editor tests: paths in the test workspace and the small heat scheme they write.

import * as assert from 'node:assert/strict';
import * as vscode from 'vscode';

export function workspaceFile(name: string): vscode.Uri {
  const folder = vscode.workspace.workspaceFolders?.[0];
  assert.ok(folder, 'the test workspace is open');
  return vscode.Uri.joinPath(folder.uri, name);
}

/** A 5-point heat scheme with the given step (its limit is 0.25). */
export const heatScheme = (dt: string): string => [
  '# Heat flow used by the editor tests.',
  'grid 2d',
  'spacing 1',
  'boundary reflect',
  `step dt = ${dt} in [0.02, 0.3]`,
  'steps 40',
  '',
  'field u = image',
  '',
  "u' = u + dt / h^2 * sum n in N4: u[n] - u",
  '',
].join('\n');
