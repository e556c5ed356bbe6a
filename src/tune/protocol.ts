// Messages between the tuning pool and its worker threads: discriminated unions on `type`. Types only.
// A pool sends one `setup` per job list (scheme source text, pictures, steps, metric), then `eval` messages.
// Must not import vscode or the DOM.

import type { RunImage } from '../engine';
import type { BackendChoice } from '../engine/wasm/select';
import type { MetricName, Setting } from './evaluate';

export interface Picture {
  readonly width: number;
  readonly height: number;
  readonly data: Float32Array;
}

export namespace ToTuneWorker {
  export interface Setup {
    readonly type: 'setup';
    /** The scheme as source text: each worker parses and checks it itself (no code crosses threads). */
    readonly source: string;
    readonly image: Picture;
    /** The picture of each `image` field by name (named inputs, channels); absent: every image field takes `image`. */
    readonly fieldImages?: Readonly<Record<string, Picture>>;
    readonly reference: Picture;
    readonly steps: number;
    readonly metric: MetricName;
    readonly dtype: 'float32' | 'float64';
    /** The kernel backend by name (`auto` or absent: the engine's default). */
    readonly backend?: BackendChoice;
  }
  export interface Eval {
    readonly type: 'eval';
    readonly id: number;
    readonly setting: Setting;
    /** Names to differentiate by: the reply then carries the metric's gradient at the best step (sensitivity mode). */
    readonly gradient?: readonly string[];
  }
  export type Type = Setup | Eval;
}

export namespace FromTuneWorker {
  export interface Result {
    readonly type: 'result';
    readonly id: number;
    readonly values: Float64Array;
    readonly bestStep: number;
    readonly best: number;
    readonly status: 'done' | 'blow-up';
    readonly gradient?: Float64Array;
  }
  export interface Failed { readonly type: 'error'; readonly id: number; readonly message: string }
  export type Type = Result | Failed;
}

export type { RunImage };
