// Records the states a run passes through (u_0 .. u_{N−1}, every field, in Float64) for the analyses that walk a
// trajectory backwards (src/analysis/influence.ts). Memory-aware: refuses runs whose states would exceed a
// budget of values (default 5·10⁷, 400 MB) with a message that says how to shrink the request.
// Must not import vscode, the DOM or Node modules.

import type { FieldState } from '../analysis/stabilityState';
import type { CheckedScheme } from '../notation/scheme';
import { EngineError } from './plan';
import { createRun, type RunOptions } from './run';

export const TRAJECTORY_BUDGET = 5e7;

export interface Trajectory {
  /** states[k]: every field before step k + 1, t = k·dt. */
  readonly states: FieldState[];
  /** The state after the last step (u_N). */
  readonly last: FieldState;
  readonly dt: number;
  readonly width: number;
  readonly height: number;
}

/**
 * Runs `startAt` steps without keeping anything, then `steps` more (float64 unless asked otherwise), keeping the
 * state before each of those (states[k] is the state at step startAt + k).
 */
export function recordTrajectory(scheme: CheckedScheme, steps: number, opts: RunOptions = {}, budget = TRAJECTORY_BUDGET, startAt = 0): Trajectory {
  const run = createRun(scheme, { dtype: 'float64', ...opts, steps: startAt + steps, every: 0, measures: false, stopChange: null });
  const g = run.geometry;
  const values = steps * scheme.fields.length * g.width * g.height;
  if (values > budget) {
    throw new EngineError(`keeping ${steps} states of ${scheme.fields.length} field(s) of ${g.width}×${g.height} pixels needs ${values.toExponential(2)} values, above the budget of ${budget.toExponential(1)}: use fewer steps or a smaller image`);
  }
  const snap = (): FieldState => ({
    width: g.width, height: g.height, t: run.t,
    fields: scheme.fields.map((_, k) => Float64Array.from(run.fieldData(k))),
  });
  for (let k = 0; k < startAt; k++) {
    run.step();
    if (run.status === 'blow-up') throw new EngineError(`the run blew up at step ${run.stepIndex}, before step ${startAt}`);
  }
  const states: FieldState[] = [];
  for (let k = 0; k < steps; k++) {
    states.push(snap());
    run.step();
    if (run.status !== 'running') {
      if (run.status === 'blow-up') throw new EngineError(`the run blew up at step ${run.stepIndex}, so there is no trajectory to follow`);
      break;
    }
  }
  return { states, last: snap(), dt: run.dt, width: g.width, height: g.height };
}
