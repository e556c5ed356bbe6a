// Decides, from the static analysis, whether a scheme obeys the extremum principle, so that the runner's
// new-extremum monitor is switched on only where a new maximum or minimum really means a too-large dt.
// Pure: imports the analysis and the notation's types only; never Node, vscode or the DOM.

import { analyseStability, linearStencil, type StabilityReport } from '../analysis/stability';
import { SchemeEvaluator } from '../analysis/linearise';
import type { CheckedScheme } from '../notation/scheme';

export interface ExtremumDecision {
  readonly applies: boolean;
  /** One sentence for logs and tests. */
  readonly reason: string;
}

const TOL = 1e-9;

/**
 * numerics.md ("Monitors"): the check applies to schemes whose frozen weights are all non-negative and sum to 1
 * with no source term, decided by the analysis. The positivity class is exactly that (for dt up to its limit).
 * A linear scheme qualifies when some dt > 0 keeps its weights non-negative, each row of weights sums to 1,
 * and the update of the zero state is zero (no source). The decision does not depend on dt: past the limit the
 * weights turn negative, and a new extremum is then precisely the symptom the monitor exists to report.
 */
export function extremumPrinciple(scheme: CheckedScheme, report?: StabilityReport): ExtremumDecision {
  report ??= analyseStability(scheme);
  if (report.method === 'positivity') return { applies: true, reason: 'positivity class: non-negative weights summing to 1' };
  if (report.method !== 'von-neumann') return { applies: false, reason: `${report.method} class: no extremum principle` };
  const w = linearStencil(scheme);
  if (!w) return { applies: false, reason: 'linear weights unavailable' };
  // positivityLimit is null both when no dt keeps the weights ≥ 0 and when every dt does; the weights at the
  // declared dt tell the two apart.
  const someDtPositive = typeof report.positivityLimit === 'number' && report.positivityLimit > 0
    || w.entries.every(e => e.w >= -TOL);
  if (!someDtPositive) return { applies: false, reason: 'some weight is negative for every dt' };
  const sums = new Float64Array(w.n);
  for (const e of w.entries) sums[e.i] += e.w;
  if (!sums.every(s => Math.abs(s - 1) <= TOL)) return { applies: false, reason: 'the weights do not sum to 1' };
  const ev = new SchemeEvaluator(scheme);
  const zero = () => 0;
  for (const u of scheme.updates) {
    for (const [x, y, t] of [[0, 0, 0], [5, 3, 0.7]] as const) {
      const v = ev.evaluateUpdate(u.field, x, scheme.dims === 2 ? y : 0, { read: zero, dt: scheme.dt, t, diffusivity: { kind: 'full' } }).value;
      if (!(Math.abs(v) <= TOL)) return { applies: false, reason: `the update of ${u.field} has a source term` };
    }
  }
  return { applies: true, reason: 'linear: non-negative weights summing to 1, no source' };
}
