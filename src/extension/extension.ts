// Composition root of the Fluxel extension: activate() builds the object graph and registers every feature, cheaply
// (the parser, checker and analysis load later, on first use). The only module the editor loads directly.
// Also exports the analysis worker's entry, which the worker thread calls after loading this same bundle.

import * as vscode from 'vscode';
import { AnalysisClient } from './analysisClient';
import { registerCommands } from './commands';
import { registerExportCommand } from './exportCommand';
import { RunLens } from './codeLens';
import type { Core } from './core';
import { StabilityDetails } from './details';
import { DiagnosticManager } from './diagnostics';
import { registerHover } from './hover';
import { registerPreview } from './preview/index';
import { registerQuickFixes } from './quickFixes';
import { SchemeRunner } from './runner';
import { VerdictStatus } from './status';

export interface FluxelApi {
  /** Milliseconds spent in activate() (host time). */
  readonly activationMs: number;
  /** Milliseconds until the parser, checker and analysis had loaded, or null before their first use. */
  coreLoadMs(): number | null;
  /** Where the last stability analysis ran ('worker' unless the worker thread could not start). */
  analysisThread(): 'worker' | 'host' | null;
}

let corePromise: Promise<Core> | null = null;
let coreMs: number | null = null;

function loadCore(): Promise<Core> {
  if (!corePromise) {
    const t0 = performance.now();
    corePromise = import('./core').then((m) => { coreMs = performance.now() - t0; return m; });
  }
  return corePromise;
}

function bundlePath(): string | null {
  // The worker can only load the bundled .js (not TypeScript sources under a test runner).
  return typeof __filename === 'string' && __filename.endsWith('.js') ? __filename : null;
}

export function activate(context: vscode.ExtensionContext): FluxelApi {
  const t0 = performance.now();
  const output = vscode.window.createOutputChannel('Fluxel');
  context.subscriptions.push(output);
  const log = (line: string): void => output.appendLine(`[${new Date().toISOString().slice(11, 23)}] ${line}`);

  const analysis = new AnalysisClient({ bundle: bundlePath(), inProcess: async () => (await loadCore()).analyseText, log });
  const manager = new DiagnosticManager(loadCore, analysis, log);
  const details = new StabilityDetails(manager);
  const runner = new SchemeRunner(loadCore, log);
  context.subscriptions.push(
    analysis,
    manager,
    details,
    runner,
    new VerdictStatus(manager),
    new RunLens(manager, runner),
    registerQuickFixes(manager),
    registerHover(manager, loadCore),
    registerCommands({ manager, details, runner, loadCore, output }),
    registerExportCommand(log),
    registerPreview(context, log),
  );
  const activationMs = performance.now() - t0;
  log(`activated in ${activationMs.toFixed(1)} ms (host time in activate)`);
  return { activationMs, coreLoadMs: () => coreMs, analysisThread: () => manager.lastThread };
}

export function deactivate(): void {
  // Everything is released through context.subscriptions.
}

/** Called inside the analysis worker thread (see analysisClient.ts). */
export async function fluxelAnalysisWorker(): Promise<void> {
  (await loadCore()).runAnalysisWorker();
}
