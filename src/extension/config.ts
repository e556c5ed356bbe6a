// Reads the Fluxel settings (all under `fluxel.`), clamped to their declared bounds.

import * as vscode from 'vscode';
import type { BackendChoice } from '../engine/wasm/select';

export interface FluxelSettings {
  readonly analysisEnabled: boolean;
  readonly debounceMs: number;
  readonly safetyFraction: number;
  readonly maxPreviewSize: number;
  readonly codeLensEnabled: boolean;
  /** `fluxel.engine.backend`: the kernel backend of engine runs started from the editor. */
  readonly backend: BackendChoice;
}

const clamp = (v: number, lo: number, hi: number, dflt: number): number => (Number.isFinite(v) ? Math.min(hi, Math.max(lo, v)) : dflt);

/** A setting value as a backend name; anything but `js` or `wasm` is `auto`. */
export function backendChoice(v: unknown): BackendChoice {
  return v === 'js' || v === 'wasm' ? v : 'auto';
}

export function readSettings(scope?: vscode.Uri): FluxelSettings {
  const c = vscode.workspace.getConfiguration('fluxel', scope);
  return {
    analysisEnabled: c.get<boolean>('analysis.enabled', true),
    debounceMs: clamp(c.get<number>('analysis.debounceMs', 250), 0, 5000, 250),
    safetyFraction: clamp(c.get<number>('fixes.safetyFraction', 0.9), 0.05, 1, 0.9),
    maxPreviewSize: Math.round(clamp(c.get<number>('preview.maxImageSize', 256), 8, 4096, 256)),
    codeLensEnabled: c.get<boolean>('codeLens.enabled', true),
    backend: backendChoice(c.get<unknown>('engine.backend', 'auto')),
  };
}
