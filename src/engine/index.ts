// The engine's public surface: compile a checked scheme into kernels, run it in-process or in a worker thread.
// Callers (CLI, extension, tests, benches) import from here, not from the modules behind it.
// Must not import vscode or the DOM; the worker client (Node) is exported from ./worker/workerClient separately.

export type { CompiledScheme, DType, FieldArray, FieldStats, FrameStats, Geometry, KernelBackend, KernelContext, RunWarning, StopReason, WarningKind } from './types';
export { JsBackend, jsBackend } from './jsBackend';
export { createRun, middleRow, Run, DEFAULT_STEP_CAP } from './run';
export { recordTrajectory, TRAJECTORY_BUDGET, type Trajectory } from './trajectory';
export { extremumPrinciple, type ExtremumDecision } from './monitorPolicy';
export type { Frame, MonitorOptions, RunCallbacks, RunImage, RunOptions, RunResult, RunStatus } from './run';
export { EngineError, planHalo, canonicalScheme, hashText } from './plan';
export { foldIndex, makeGeometry, planGhosts, fillGhosts } from './boundary';
export { gaussianTaps, blurInto } from './blur';
export { generateSource, jsNumber } from './codegen';
