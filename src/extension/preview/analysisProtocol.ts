// Messages between the live run's host side and its analysis worker (stability verdict, weights at a pixel,
// impulse response, scene generation and image decoding, A/B metrics, frequency map, modified equation, influence map). Types only; the worker parses the scheme text itself, so requests carry plain data.
// Must not import vscode or the DOM.

import type { ToPreview, WireVerdict } from '../../protocol/preview';

/** The message of an influence request ended by a newer one (the session drops it silently). */
export const SUPERSEDED = 'superseded by a newer request';

export interface KnobSet {
  readonly values: Readonly<Record<string, number>>;
  readonly dt: number;
}

export namespace ToAnalysis {
  export interface Verdict { readonly type: 'verdict'; readonly id: number; readonly text: string; readonly knobs: KnobSet }
  export interface Weights {
    readonly type: 'weights';
    readonly id: number;
    readonly text: string;
    readonly knobs: KnobSet;
    /** Every field of the scheme at full resolution, indexed like scheme.fields. */
    readonly fields: readonly Float32Array[] | readonly Float64Array[];
    readonly width: number;
    readonly height: number;
    readonly t: number;
    readonly x: number;
    readonly y: number;
    readonly field: string;
  }
  export interface Impulse { readonly type: 'impulse'; readonly id: number; readonly text: string; readonly knobs: KnobSet; readonly steps: number }
  /** A generated scene (its noisy input and clean reference). */
  export interface Scene { readonly type: 'scene'; readonly id: number; readonly scene: string; readonly noise: number; readonly seed: number; readonly size: number }
  /** Decodes an image file's bytes to its grey (luma) picture, with the colour and alpha channels; `range` as --range. */
  export interface Decode { readonly type: 'decode'; readonly id: number; readonly bytes: Uint8Array; readonly range?: { readonly lo: number; readonly hi: number } }
  /**
   * Metrics of one result for an A/B comparison: PSNR and SSIM against `reference` (when given) and its total
   * variation; with `pinned`, also PSNR and SSIM of the result against the pinned one.
   */
  export interface Compare {
    readonly type: 'compare';
    readonly id: number;
    readonly result: AnyPicture;
    readonly reference: AnyPicture | null;
    readonly pinned: AnyPicture | null;
  }
  /** The frequency map of the scheme at these knob values (ToPreview.Spectrum without its envelope). */
  export interface Spectrum { readonly type: 'spectrum'; readonly id: number; readonly text: string; readonly knobs: KnobSet; readonly at?: FrozenAt }
  /** What the scheme approximates (modified equation) and the diagnostics that go with it. */
  export interface Approximates {
    readonly type: 'approximates';
    readonly id: number;
    readonly text: string;
    readonly knobs: KnobSet;
    /** Freeze the coefficients at this pixel of this full-resolution state (a picked pixel); default the initial state. */
    readonly at?: FrozenAt;
  }
  /**
   * The influence map of pixel (x, y) of `field` after `steps` steps from the run's input: the trajectory is
   * recomputed at full resolution from `image` (null for schemes whose fields start from expressions).
   */
  export interface Influence {
    readonly type: 'influence';
    readonly id: number;
    readonly text: string;
    readonly knobs: KnobSet;
    readonly image: Picture | null;
    /** Per-field pictures (named inputs and channels, as the run bound them); absent: every image field reads `image`. */
    readonly fieldImages?: Readonly<Record<string, Picture>>;
    readonly width: number;
    readonly height: number;
    readonly steps: number;
    readonly x: number;
    readonly y: number;
    readonly field: string;
  }
  export type Type = Verdict | Weights | Impulse | Scene | Decode | Compare | Spectrum | Approximates | Influence;
}

/** A pixel of a full-resolution state (every field, indexed like scheme.fields) at a recorded step. */
export interface FrozenAt {
  readonly fields: readonly Float32Array[] | readonly Float64Array[];
  readonly width: number;
  readonly height: number;
  readonly t: number;
  readonly step: number;
  readonly x: number;
  readonly y: number;
}

/** The analysis thread's answers are the page's messages without their envelope (the session adds type, source, runId). */
export type SpectrumResult = Omit<ToPreview.Spectrum, 'type' | 'source' | 'runId'>;

export type ApproximatesResult = Omit<ToPreview.Approximates, 'type' | 'source' | 'runId'>;

/** The session adds the picked pixel and step too. */
export type InfluenceResult = Omit<ToPreview.Influence, 'type' | 'source' | 'runId' | 'step' | 'x' | 'y'>;

export interface SideMetrics {
  readonly psnr: number | null;
  readonly ssim: number | null;
  readonly tv: number | null;
}

export interface CompareResult {
  readonly metrics: SideMetrics;
  readonly between: { readonly psnr: number; readonly ssim: number } | null;
}

export interface WeightsResult {
  readonly field: string;
  readonly radius: number;
  readonly dims: 1 | 2;
  readonly grid: number[];
  readonly sum: number;
  readonly centre: number;
  readonly negativeCentre: boolean;
  readonly value: number;
  readonly others: number;
}

export interface ImpulseResult {
  readonly steps: number;
  readonly t: number;
  readonly sigma: number[];
  readonly heatSigma: number;
  readonly sum: number;
  readonly truncated: boolean;
}

/** A picture in either precision (run states are Float64 for `dtype float64` schemes). */
export interface AnyPicture {
  readonly width: number;
  readonly height: number;
  readonly data: Float32Array | Float64Array;
}

export interface Picture {
  readonly width: number;
  readonly height: number;
  /** The grey picture: BT.709 luma of colour pictures. */
  readonly data: Float32Array;
  /** Colour pictures (files and the `palette` scene): red, green, blue and alpha; absent for grey ones. */
  readonly channels?: PictureChannels;
}

export interface PictureChannels {
  readonly red: Float32Array;
  readonly green: Float32Array;
  readonly blue: Float32Array;
  readonly alpha: Float32Array;
}

export namespace FromAnalysis {
  export interface Verdict { readonly type: 'verdict'; readonly id: number; readonly verdict: WireVerdict; readonly extremumCheck: boolean }
  export interface Weights { readonly type: 'weights'; readonly id: number; readonly weights: WeightsResult }
  export interface Impulse { readonly type: 'impulse'; readonly id: number; readonly impulse: ImpulseResult | null }
  export interface Scene { readonly type: 'scene'; readonly id: number; readonly noisy: Picture; readonly clean: Picture }
  export interface Decode { readonly type: 'decode'; readonly id: number; readonly picture: Picture }
  export interface Compare { readonly type: 'compare'; readonly id: number; readonly compare: CompareResult }
  export interface Spectrum { readonly type: 'spectrum'; readonly id: number; readonly spectrum: SpectrumResult }
  export interface Approximates { readonly type: 'approximates'; readonly id: number; readonly approximates: ApproximatesResult }
  export interface Influence { readonly type: 'influence'; readonly id: number; readonly influence: InfluenceResult }
  export interface Failed { readonly type: 'error'; readonly id: number; readonly message: string }
  export type Type = Verdict | Weights | Impulse | Scene | Decode | Compare | Spectrum | Approximates | Influence | Failed;
}
