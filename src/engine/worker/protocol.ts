// Messages between the engine worker and its client: discriminated unions on `type`, each stamped with `runId`
// so a client can drop messages of a run it has already replaced. Types only; imports no runtime code.
// Must not import vscode or the DOM.

import type { CheckedScheme } from '../../notation/scheme';
import type { RunOptions, RunResult } from '../run';
import type { FieldArray, FrameStats, RunWarning } from '../types';
import type { BackendChoice } from '../wasm/select';

/**
 * Run options that survive structured cloning (no callbacks): the backend travels by name and the worker resolves
 * it (backendByName); absent, the worker uses the engine's default.
 */
export type WorkerRunOptions = Omit<RunOptions, 'backend'> & { readonly backend?: BackendChoice };

/** A field snapshot: row-major values with their size. */
export interface FieldSnapshot {
  readonly width: number;
  readonly height: number;
  readonly data: FieldArray;
}

export namespace ToWorker {
  export interface Start {
    readonly type: 'start';
    readonly runId: number;
    /** The checked scheme as plain data (Maps survive structured cloning), or the source text to check inside. */
    readonly scheme?: CheckedScheme;
    readonly source?: string;
    readonly options: WorkerRunOptions;
    /** One Int32 on a SharedArrayBuffer: the client stores 1 to cancel; the worker reads it once per step. */
    readonly cancel: SharedArrayBuffer;
    /** Minimum milliseconds between progress messages. */
    readonly progressEveryMs?: number;
  }
  export type Type = Start;
}

export namespace FromWorker {
  export interface Progress { readonly type: 'progress'; readonly runId: number; readonly step: number; readonly total: number }
  export interface Frame { readonly type: 'frame'; readonly runId: number; readonly stats: FrameStats; readonly fields: Record<string, FieldSnapshot> }
  export interface Warning { readonly type: 'warning'; readonly runId: number; readonly warning: RunWarning }
  export interface Done { readonly type: 'done'; readonly runId: number; readonly result: RunResult; readonly fields: Record<string, FieldSnapshot> }
  export interface Failed { readonly type: 'error'; readonly runId: number; readonly message: string }
  export type Type = Progress | Frame | Warning | Done | Failed;
}
