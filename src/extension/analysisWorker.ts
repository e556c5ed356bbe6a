// The slow half of checking, run in a worker thread so the extension host never waits for it: parses and checks the
// text again, runs the static stability analysis, and returns its report and diagnostics as plain data.
// Must not import vscode: the worker loads the extension bundle with an empty stand-in for it.

import { parentPort } from 'node:worker_threads';
import { analyseWhy } from '../analysis/modifiedEquation';
import { analyseStability, stabilityDiagnostics, type StabilityReport } from '../analysis/stability';
import type { Diagnostic } from '../notation/diagnostics';
import { parseAndCheck } from '../notation/index';

export interface AnalysisRequest {
  readonly id: number;
  readonly text: string;
}

export interface AnalysisResult {
  /** Null when the text has errors (nothing to analyse). */
  readonly report: StabilityReport | null;
  readonly diagnostics: readonly Diagnostic[];
  /** Wall-clock milliseconds the analysis took, for the log. */
  readonly ms: number;
  readonly error?: string;
  /** What the scheme approximates (the modified-equation summary), for hovers and the panel; null with errors. */
  readonly approximates?: string | null;
}

export interface AnalysisResponse extends AnalysisResult {
  readonly id: number;
}

/** The analysis of one text; never throws. */
export function analyseText(text: string): AnalysisResult {
  const t0 = performance.now();
  try {
    const checked = parseAndCheck(text);
    if (!checked.scheme) return { report: null, diagnostics: [], ms: performance.now() - t0 };
    const report = analyseStability(checked.scheme);
    const why = analyseWhy(checked.scheme);
    return {
      report, diagnostics: [...stabilityDiagnostics(checked.scheme, report), ...why.diagnostics], ms: performance.now() - t0,
      approximates: why.equation?.summary ?? null,
    };
  } catch (err) {
    return { report: null, diagnostics: [], ms: performance.now() - t0, error: err instanceof Error ? err.message : String(err) };
  }
}

/** Entry point inside the worker thread: answers every request in order. */
export function runAnalysisWorker(): void {
  const port = parentPort;
  if (!port) throw new Error('runAnalysisWorker must run in a worker thread');
  port.on('message', (m: AnalysisRequest) => {
    const r: AnalysisResponse = { id: m.id, ...analyseText(m.text) };
    port.postMessage(r);
  });
}
