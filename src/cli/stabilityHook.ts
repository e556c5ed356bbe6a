// The seam between `fluxel check` and the static stability analysis: runs it on a checked scheme and
// returns the JSON `stability` object (contracts.md §4), its diagnostics and a one-line verdict for people.

import { analyseWhy, modifiedEquationJson } from '../analysis/modifiedEquation';
import { analyseStability, stabilityDiagnostics, type StabilityReport } from '../analysis/stability';
import type { Diagnostic } from '../notation/diagnostics';
import type { CheckedScheme } from '../notation/scheme';

export interface CheckStability {
  readonly report: StabilityReport;
  readonly diagnostics: readonly Diagnostic[];
  readonly summary: string;
  /** The modified equation ("approximates" in `check --json`), null when it could not be evaluated. */
  readonly approximates: Record<string, unknown> | null;
  readonly approximatesText: string | null;
}

const METHOD_WORDS: Record<string, string> = {
  'von-neumann': 'von Neumann analysis',
  positivity: 'positivity (extremum principle) bound',
  linearised: 'linearised local estimate',
  none: 'no method applies',
};

export function stabilityForCheck(scheme: CheckedScheme): CheckStability {
  const report = analyseStability(scheme);
  const why = analyseWhy(scheme);
  const diagnostics = [...stabilityDiagnostics(scheme, report), ...why.diagnostics];
  const verdict = report.method === 'none'
    ? 'no bound known'
    : report.stable
      ? report.estimate ? 'estimate only, within limit' : 'within limit'
      : 'over the limit';
  const limit = report.unconditional ? 'any dt > 0' : report.limit === null ? 'none' : `dt ≤ ${fmt(report.limit)}`;
  const summary = `stability: ${verdict} (dt = ${fmt(report.dt)}, limit ${limit}, by ${METHOD_WORDS[report.method] ?? report.method}). ${report.reason}`;
  return {
    report, diagnostics, summary,
    approximates: why.equation ? modifiedEquationJson(why.equation) : null,
    approximatesText: why.equation ? `approximates: ${why.equation.summary.replace(/^approximates /, '')}` : null,
  };
}

function fmt(v: number): string {
  return Number(v.toPrecision(6)).toString();
}
