// Messages between the extension host and the live-run webview: two discriminated unions on `type`, each message
// stamped with `source` (the scheme's document URI) and, where it belongs to a run, `runId` (so stale frames drop).
// Also the validators each side applies on receipt: a message that fails them is ignored, never trusted.
// Imported by both sides (src/extension/preview and media/); must not import Node, the DOM, vscode or other Fluxel folders.

/** A source range, 1-based lines and UTF-16 columns, `end` exclusive (the `check --json` shape). */
export interface WireRange {
  readonly start: { readonly line: number; readonly column: number };
  readonly end: { readonly line: number; readonly column: number };
}

export const SCENE_NAMES = ['survey', 'cells', 'card', 'palette'] as const;
export type SceneName = (typeof SCENE_NAMES)[number];

/** What the scheme runs on: a generated scene (noisy input, clean reference) or an image file (a URI string). */
export type InputChoice =
  | { readonly kind: 'scene'; readonly scene: SceneName; readonly noise: number; readonly seed: number }
  | { readonly kind: 'file'; readonly uri: string; readonly range?: SampleRange };

/** `--range LO:HI` for integer files: value = (sample − lo) / (hi − lo). */
export interface SampleRange { readonly lo: number; readonly hi: number }

/** What a named input (`image "mask"`) runs on: the generated mask (the default) or an image file. */
export type NamedInputChoice =
  | { readonly kind: 'mask' }
  | { readonly kind: 'file'; readonly uri: string; readonly range?: SampleRange };

/** One named input of the scheme, with its current choice and a label for it. */
export interface NamedInputSpec {
  readonly name: string;
  readonly choice: NamedInputChoice;
  readonly label: string;
}

/** One knob: a `param` with its declared range (null bounds when the file gives none). */
export interface KnobSpec {
  readonly name: string;
  readonly value: number;
  readonly lo: number | null;
  readonly hi: number | null;
}

export type VerdictMethod = 'von-neumann' | 'positivity' | 'linearised' | 'none';

export interface WireVerdict {
  readonly method: VerdictMethod;
  readonly limit: number | null;
  readonly dt: number;
  readonly stable: boolean;
  readonly reason: string;
  readonly estimate: boolean;
  readonly unconditional: boolean;
  readonly positivityLimit: number | null;
  readonly diffusionLimit: number | null;
}

export type FindingKind = 'blow-up' | 'new-extremum' | 'growth' | 'no-convergence';

export interface WireFinding {
  readonly kind: FindingKind;
  readonly step: number;
  readonly x: number;
  readonly y: number;
  readonly field: string;
  readonly message: string;
  readonly range: WireRange;
}

export interface WireStats {
  readonly min: number;
  readonly max: number;
  readonly mean: number;
}

/**
 * Per-step measures of the shown field at a recorded step (numerics.md "Metrics"): mean drift (mean minus the
 * initial mean), isotropic total variation, Dirichlet energy, and the change of the last step ‖uⁿ⁺¹ − uⁿ‖ as RMS and
 * max. null where the engine did not report a measure.
 */
export interface WireMeasures {
  readonly drift: number | null;
  readonly tv: number | null;
  readonly energy: number | null;
  readonly changeRms: number | null;
  readonly changeMax: number | null;
}

/** The metrics of one side of an A/B comparison: against the clean reference (null without one) and its TV. */
export interface WireSideMetrics {
  readonly psnr: number | null;
  readonly ssim: number | null;
  readonly tv: number | null;
}

/** A pinned result (the "A" of an A/B comparison) as the page draws it: frame-sized, with what it was run with. */
export interface WirePinned {
  readonly label: string;
  readonly step: number;
  readonly t: number;
  readonly field: string;
  /** Full-resolution size of the pinned state (a comparison needs the same size now). */
  readonly fullWidth: number;
  readonly fullHeight: number;
  readonly width: number;
  readonly height: number;
  readonly data: Float32Array;
  readonly metrics: WireSideMetrics;
  /** When it was pinned (ISO 8601), shown beside the label. */
  readonly pinnedAt: string;
}

export namespace ToPreview {
  interface Base { readonly source: string }

  /** The checked scheme's knobs and shape; sent after every successful check (before its run starts). */
  export interface Scheme extends Base {
    readonly type: 'scheme';
    readonly fileName: string;
    readonly dims: 1 | 2;
    readonly fields: readonly string[];
    readonly knobs: readonly KnobSpec[];
    readonly dt: KnobSpec;
    readonly steps: number;
    /** The knob values the next run uses (declared values unless the user moved them). */
    readonly current: { readonly values: Readonly<Record<string, number>>; readonly dt: number };
    readonly input: InputChoice;
    readonly inputLabel: string;
    /** Whether "fit knobs" can run now, and the button's tooltip (why it cannot, or what it will do). */
    readonly fit?: { readonly ready: boolean; readonly note: string };
    /** The named inputs the scheme reads (`image "NAME"`), in order of first use; absent or empty when none. */
    readonly namedInputs?: readonly NamedInputSpec[];
    /** The knob (or `dt`) whose derivative image the frames show (FromPreview.ShowDerivative); null: the values. */
    readonly derivative?: string | null;
  }
  /** A run begins: sizes of the full-resolution grid and of the frames that will be posted. */
  export interface RunStarted extends Base {
    readonly type: 'runStarted';
    readonly runId: number;
    readonly width: number;
    readonly height: number;
    readonly frameWidth: number;
    readonly frameHeight: number;
    readonly steps: number;
    readonly every: number;
    readonly dt: number;
    readonly field: string;
    readonly hasReference: boolean;
  }
  /** One recorded step of the shown field, row-major, downsampled when the grid exceeds the preview size. */
  export interface Frame extends Base {
    readonly type: 'frame';
    readonly runId: number;
    readonly field: string;
    readonly step: number;
    readonly t: number;
    readonly width: number;
    readonly height: number;
    readonly data: Float32Array;
    readonly stats: WireStats;
    readonly psnr: number | null;
    /** Schemes binding image.red, .green and .blue: those three fields at this step, same size as `data`, for a colour view. */
    readonly colour?: { readonly red: Float32Array; readonly green: Float32Array; readonly blue: Float32Array };
    /** Present when the frame is the derivative ∂field/∂wrt (the engine's sensitivity mode), not the field's values. */
    readonly wrt?: string;
    /** Per-step measures of this field at this step, when the engine reports them. */
    readonly measures?: WireMeasures;
  }
  export interface Finding extends Base { readonly type: 'finding'; readonly runId: number; readonly finding: WireFinding }
  export interface RunEnded extends Base {
    readonly type: 'runEnded';
    readonly runId: number;
    readonly status: 'done' | 'cancelled' | 'blow-up' | 'failed';
    readonly stepsDone: number;
    readonly best: { readonly step: number; readonly psnr: number } | null;
    readonly message: string | null;
  }
  /** The static verdict for the knob values of run `runId`. */
  export interface Verdict extends Base { readonly type: 'verdict'; readonly runId: number; readonly verdict: WireVerdict }
  /** The file has errors (the last good run stays, dimmed), or `first` is null once it checks clean again. */
  export interface Problems extends Base {
    readonly type: 'problems';
    readonly count: number;
    readonly first: { readonly message: string; readonly code: string; readonly range: WireRange } | null;
  }
  /** Weights at (x, y), step n, computed on the full-resolution state. */
  export interface Weights extends Base {
    readonly type: 'weights';
    readonly runId: number;
    readonly step: number;
    readonly x: number;
    readonly y: number;
    readonly field: string;
    readonly radius: number;
    readonly dims: 1 | 2;
    /** Row-major (2r+1)^dims weights on the field's own old values. */
    readonly grid: readonly number[];
    readonly sum: number;
    readonly centre: number;
    readonly negativeCentre: boolean;
    readonly value: number;
    /** Weights on other fields (coupled schemes), as text lines. */
    readonly others: number;
  }
  /** For linear schemes: the N-step impulse response's spread against the heat kernel's √(2t). */
  export interface Impulse extends Base {
    readonly type: 'impulse';
    readonly runId: number;
    readonly steps: number;
    readonly t: number;
    readonly sigma: readonly number[];
    readonly heatSigma: number;
    readonly sum: number;
    readonly truncated: boolean;
  }
  /** A row of the shown field at full resolution, at step 0 and at `step`. */
  export interface Profile extends Base {
    readonly type: 'profile';
    readonly runId: number;
    readonly row: number;
    readonly step: number;
    readonly before: Float32Array;
    readonly after: Float32Array;
  }
  /** A request could not be served (e.g. the image file could not be read); shown in the panel, not as a toast. */
  export interface Notice extends Base { readonly type: 'notice'; readonly level: 'info' | 'error'; readonly text: string }
  /**
   * The state of a knob fit (FromPreview.FitKnobs): `running` with the evaluations so far, then one of `done` (with
   * the values found, the best step and its metric against the clean scene), `cancelled` or `failed` (`message`).
   */
  export interface Fit extends Base {
    readonly type: 'fit';
    readonly fitId: number;
    readonly status: 'running' | 'done' | 'cancelled' | 'failed';
    readonly evaluations: number;
    readonly metric: 'psnr' | 'ssim';
    readonly values: Readonly<Record<string, number>> | null;
    readonly step: number | null;
    readonly best: number | null;
    readonly noisy: number | null;
    readonly message: string | null;
  }
  /**
   * The frequency map of the scheme for the knob values of run `runId`: |G(θ)| on a `cols` × `rows` grid over
   * θx, θy ∈ [−π, π], both ends included (amp[j·cols + i] sits at θx = −π + 2π·i/(cols − 1), θy = −π + 2π·j/(rows − 1);
   * 1-D schemes have one row), the colour bar's range, the stable region's edge as line segments in θ
   * (x0, y0, x1, y1, ...), and the isotropy error by direction.
   */
  export interface Spectrum extends Base {
    readonly type: 'spectrum';
    readonly runId: number;
    readonly dims: 1 | 2;
    readonly cols: number;
    readonly rows: number;
    readonly amp: Float32Array;
    readonly lo: number;
    readonly hi: number;
    readonly edge: readonly number[];
    /** The largest |G| and where (θ). */
    readonly peak: { readonly value: number; readonly theta: readonly number[] };
    /** Relative error of the discrete operator's symbol against the continuous one along |θ| = radius, by angle (radians). */
    readonly isotropy: { readonly radius: number; readonly angles: readonly number[]; readonly error: readonly number[] } | null;
    /** One sentence about the map (what the field is, or why part of it is missing). */
    readonly note: string;
  }
  /**
   * The influence map of pixel (x, y) at `step`: how much each input pixel (step 0) moves it, i.e. its row of the
   * product of the `steps` frozen-weight matrices, over the full-resolution window x0..x0+width, y0..y0+height.
   */
  export interface Influence extends Base {
    readonly type: 'influence';
    readonly runId: number;
    readonly step: number;
    readonly x: number;
    readonly y: number;
    readonly steps: number;
    readonly field: string;
    readonly x0: number;
    readonly y0: number;
    readonly width: number;
    readonly height: number;
    readonly data: Float32Array;
    readonly sum: number;
    /** Largest |weight| (the overlay's scale). */
    readonly peak: number;
    readonly note: string | null;
  }
  /** What the scheme approximates (modified equation) for the knob values of run `runId`, in words. */
  export interface Approximates extends Base {
    readonly type: 'approximates';
    readonly runId: number;
    readonly text: string;
    readonly details: readonly string[];
    readonly warnings: readonly { readonly severity: 'warning' | 'info'; readonly message: string; readonly range: WireRange | null }[];
  }
  /** The pinned result (A/B), or null once unpinned. Survives edits, reruns and re-showing the panel. */
  export interface Baseline extends Base { readonly type: 'baseline'; readonly pinned: WirePinned | null }
  /** The pinned result against the current run at `step`: metrics of both sides and how far apart they are. */
  export interface Comparison extends Base {
    readonly type: 'comparison';
    readonly runId: number;
    readonly step: number;
    /** False when the sizes differ (then only the side-by-side view is meaningful); `note` says why. */
    readonly comparable: boolean;
    readonly note: string | null;
    readonly pinned: WireSideMetrics;
    readonly current: WireSideMetrics;
    /** current − pinned, metric by metric (null where either side has none). */
    readonly delta: WireSideMetrics;
    /** PSNR and SSIM of the current result against the pinned one (null when not comparable). */
    readonly between: { readonly psnr: number; readonly ssim: number } | null;
  }
  export type Type = Scheme | RunStarted | Frame | Finding | RunEnded | Verdict | Problems | Weights | Impulse | Profile | Notice | Fit
    | Spectrum | Influence | Approximates | Baseline | Comparison;
}

export namespace FromPreview {
  interface Base { readonly source: string }
  /** The page has loaded and listens; the host replies with the current scheme and replays the current run. */
  export interface Ready extends Base { readonly type: 'ready' }
  export interface SetKnobs extends Base { readonly type: 'setKnobs'; readonly values: Readonly<Record<string, number>>; readonly dt: number }
  /** Writes the knob values into the file as one undoable edit. */
  export interface WriteKnobs extends Base { readonly type: 'writeKnobs'; readonly values: Readonly<Record<string, number>>; readonly dt: number }
  export interface SetInput extends Base { readonly type: 'setInput'; readonly input: InputChoice }
  /** Opens the host's file picker for an image. */
  export interface ChooseImage extends Base { readonly type: 'chooseImage' }
  /** Sets what a named input runs on. */
  export interface SetNamedInput extends Base { readonly type: 'setNamedInput'; readonly name: string; readonly input: NamedInputChoice }
  /** Opens the host's file picker for a named input. */
  export interface ChooseNamedImage extends Base { readonly type: 'chooseNamedImage'; readonly name: string }
  export interface ShowField extends Base { readonly type: 'showField'; readonly field: string }
  /** Click on a pixel (full-resolution coordinates) of the frame at `step`. */
  export interface PickPixel extends Base { readonly type: 'pickPixel'; readonly runId: number; readonly step: number; readonly x: number; readonly y: number }
  export interface RequestProfile extends Base { readonly type: 'requestProfile'; readonly runId: number; readonly step: number; readonly row: number }
  /** Reveal a source range in the editor with the range selected. */
  export interface Reveal extends Base { readonly type: 'reveal'; readonly range: WireRange }
  export interface Rerun extends Base { readonly type: 'rerun' }
  /** Fits the knobs that declare a range (or only `names`, when given) on the current scene; see ToPreview.Fit. */
  export interface FitKnobs extends Base { readonly type: 'fitKnobs'; readonly names?: readonly string[] }
  /** Show the derivative of the shown field with respect to a knob or `dt` (computed in the engine worker), or the values (null). */
  export interface ShowDerivative extends Base { readonly type: 'showDerivative'; readonly name: string | null }
  /** Pins the current run's shown field at `step` as the baseline of an A/B comparison (replacing an older pin). */
  export interface Pin extends Base { readonly type: 'pin'; readonly runId: number; readonly step: number }
  export interface Unpin extends Base { readonly type: 'unpin' }
  /** Asks for the pinned result against the current run at `step` (ToPreview.Comparison). */
  export interface RequestComparison extends Base { readonly type: 'requestComparison'; readonly runId: number; readonly step: number }
  /** Asks for the influence map of pixel (x, y) at `step` (full-resolution coordinates) over the steps from the input. */
  export interface RequestInfluence extends Base { readonly type: 'requestInfluence'; readonly runId: number; readonly step: number; readonly x: number; readonly y: number }
  export type Type = Ready | SetKnobs | WriteKnobs | SetInput | ChooseImage | ShowField | PickPixel | RequestProfile | Reveal | Rerun | FitKnobs
    | SetNamedInput | ChooseNamedImage | ShowDerivative | Pin | Unpin | RequestComparison | RequestInfluence;
}

// ------------------------------------------------------------------------------------------------ validation
// Hand-written checks, one per message: the field list of each type is short, and a schema library would cost
// more bundle size than these lines. Every check returns the message rebuilt from checked fields only, so unknown
// extra properties never travel further.

type Obj = Record<string, unknown>;
const isObj = (v: unknown): v is Obj => typeof v === 'object' && v !== null && !Array.isArray(v);
const num = (v: unknown): v is number => typeof v === 'number' && Number.isFinite(v);
const numOrNull = (v: unknown): v is number | null => v === null || num(v);
const int = (v: unknown, min = 0): v is number => typeof v === 'number' && Number.isInteger(v) && v >= min;
const str = (v: unknown, max = 100_000): v is string => typeof v === 'string' && v.length <= max;
const NAME = /^[A-Za-z_][A-Za-z0-9_]*$/;
const name = (v: unknown): v is string => str(v, 200) && NAME.test(v);

/** Largest seed and noise the panel accepts (scenes take seeds as unsigned 32-bit integers). */
export const MAX_SEED = 4294967295;
export const MAX_NOISE = 1;

function range(v: unknown): WireRange | null {
  if (!isObj(v) || !isObj(v.start) || !isObj(v.end)) return null;
  const { start, end } = v;
  if (!int(start.line, 1) || !int(start.column, 1) || !int(end.line, 1) || !int(end.column, 1)) return null;
  return { start: { line: start.line, column: start.column }, end: { line: end.line, column: end.column } };
}

function knobValues(v: unknown): Record<string, number> | null {
  if (!isObj(v)) return null;
  const out: Record<string, number> = {};
  const keys = Object.keys(v);
  if (keys.length > 200) return null;
  for (const k of keys) {
    if (!name(k) || !num(v[k])) return null;
    out[k] = v[k] as number;
  }
  return out;
}

export function validInput(v: unknown): InputChoice | null {
  if (!isObj(v)) return null;
  if (v.kind === 'scene') {
    if (!(SCENE_NAMES as readonly unknown[]).includes(v.scene)) return null;
    if (!num(v.noise) || v.noise < 0 || v.noise > MAX_NOISE) return null;
    if (!int(v.seed) || v.seed > MAX_SEED) return null;
    return { kind: 'scene', scene: v.scene as SceneName, noise: v.noise, seed: v.seed };
  }
  if (v.kind === 'file' && str(v.uri, 4096) && v.uri.length > 0) {
    if (v.range === undefined) return { kind: 'file', uri: v.uri };
    const r = sampleRange(v.range);
    return r ? { kind: 'file', uri: v.uri, range: r } : null;
  }
  return null;
}

/** A finite range with lo < hi, or null. */
export function sampleRange(v: unknown): SampleRange | null {
  return isObj(v) && num(v.lo) && num(v.hi) && v.hi > v.lo ? { lo: v.lo, hi: v.hi } : null;
}

/** Input names as the notation allows them (notation/scheme.ts INPUT_NAME, restated: this file imports no other folder). */
const INPUT_NAME_RE = /^[A-Za-z][A-Za-z0-9_-]*$/;
const inputName = (v: unknown): v is string => str(v, 200) && INPUT_NAME_RE.test(v);

export function validNamedInput(v: unknown): NamedInputChoice | null {
  if (!isObj(v)) return null;
  if (v.kind === 'mask') return { kind: 'mask' };
  if (v.kind === 'file' && str(v.uri, 4096) && v.uri.length > 0) {
    if (v.range === undefined) return { kind: 'file', uri: v.uri };
    const r = sampleRange(v.range);
    return r ? { kind: 'file', uri: v.uri, range: r } : null;
  }
  return null;
}

/** Float32Array as sent, or a plain number array (a host that serialises typed arrays as lists) converted. */
function floats(v: unknown, length?: number): Float32Array | null {
  let out: Float32Array | null = null;
  if (v instanceof Float32Array) out = v;
  else if (Array.isArray(v) && v.every((x) => typeof x === 'number')) out = Float32Array.from(v as number[]);
  else if (isObj(v) && !(v instanceof ArrayBuffer)) {
    // Some hosts deliver typed arrays as index-keyed objects; accept them when every key is an index.
    const keys = Object.keys(v);
    if (keys.every((k, i) => k === String(i) && typeof v[k] === 'number')) out = Float32Array.from(keys.map((k) => v[k] as number));
  }
  if (out && length !== undefined && out.length !== length) return null;
  return out;
}

/** Checks a message the webview sent; null means "ignore it". */
export function validateFromPreview(raw: unknown): FromPreview.Type | null {
  if (!isObj(raw) || !str(raw.source, 4096) || typeof raw.type !== 'string') return null;
  const source = raw.source;
  switch (raw.type) {
    case 'ready': case 'chooseImage': case 'rerun': case 'unpin':
      return { type: raw.type, source };
    case 'setKnobs': case 'writeKnobs': {
      const values = knobValues(raw.values);
      if (!values || !num(raw.dt) || raw.dt <= 0) return null;
      return { type: raw.type, source, values, dt: raw.dt };
    }
    case 'setInput': {
      const input = validInput(raw.input);
      return input ? { type: 'setInput', source, input } : null;
    }
    case 'showField':
      return name(raw.field) ? { type: 'showField', source, field: raw.field } : null;
    case 'setNamedInput': {
      const input = validNamedInput(raw.input);
      return input && inputName(raw.name) ? { type: 'setNamedInput', source, name: raw.name, input } : null;
    }
    case 'chooseNamedImage':
      return inputName(raw.name) ? { type: 'chooseNamedImage', source, name: raw.name } : null;
    case 'pickPixel':
      if (!int(raw.runId) || !int(raw.step) || !int(raw.x) || !int(raw.y)) return null;
      return { type: 'pickPixel', source, runId: raw.runId, step: raw.step, x: raw.x, y: raw.y };
    case 'requestProfile':
      if (!int(raw.runId) || !int(raw.step) || !int(raw.row)) return null;
      return { type: 'requestProfile', source, runId: raw.runId, step: raw.step, row: raw.row };
    case 'reveal': {
      const r = range(raw.range);
      return r ? { type: 'reveal', source, range: r } : null;
    }
    case 'pin': case 'requestComparison':
      if (!int(raw.runId) || !int(raw.step)) return null;
      return { type: raw.type, source, runId: raw.runId, step: raw.step };
    case 'requestInfluence':
      if (!int(raw.runId) || !int(raw.step) || !int(raw.x) || !int(raw.y)) return null;
      return { type: 'requestInfluence', source, runId: raw.runId, step: raw.step, x: raw.x, y: raw.y };
    case 'fitKnobs': {
      if (raw.names === undefined) return { type: 'fitKnobs', source };
      if (!Array.isArray(raw.names) || raw.names.length === 0 || raw.names.length > 200 || !raw.names.every(name)) return null;
      return { type: 'fitKnobs', source, names: [...raw.names] as string[] };
    }
    case 'showDerivative':
      return raw.name === null || name(raw.name) ? { type: 'showDerivative', source, name: raw.name } : null;
    default:
      return null;
  }
}

function knob(v: unknown): KnobSpec | null {
  if (!isObj(v) || !str(v.name, 200) || !num(v.value) || !numOrNull(v.lo) || !numOrNull(v.hi)) return null;
  return { name: v.name, value: v.value, lo: v.lo, hi: v.hi };
}

function verdict(v: unknown): WireVerdict | null {
  const methods: readonly unknown[] = ['von-neumann', 'positivity', 'linearised', 'none'];
  if (!isObj(v) || !methods.includes(v.method) || !numOrNull(v.limit) || !num(v.dt) || typeof v.stable !== 'boolean' || !str(v.reason)) return null;
  if (typeof v.estimate !== 'boolean' || typeof v.unconditional !== 'boolean' || !numOrNull(v.positivityLimit) || !numOrNull(v.diffusionLimit)) return null;
  return {
    method: v.method as VerdictMethod, limit: v.limit, dt: v.dt, stable: v.stable, reason: v.reason, estimate: v.estimate,
    unconditional: v.unconditional, positivityLimit: v.positivityLimit, diffusionLimit: v.diffusionLimit,
  };
}

function finding(v: unknown): WireFinding | null {
  const kinds: readonly unknown[] = ['blow-up', 'new-extremum', 'growth', 'no-convergence'];
  if (!isObj(v) || !kinds.includes(v.kind) || !int(v.step) || !int(v.x) || !int(v.y) || !str(v.field, 200) || !str(v.message)) return null;
  const r = range(v.range);
  return r ? { kind: v.kind as FindingKind, step: v.step, x: v.x, y: v.y, field: v.field, message: v.message, range: r } : null;
}

const statsOf = (v: unknown): WireStats | null =>
  isObj(v) && typeof v.min === 'number' && typeof v.max === 'number' && typeof v.mean === 'number' ? { min: v.min, max: v.max, mean: v.mean } : null;

const numOrNullish = (v: unknown): v is number | null => v === null || typeof v === 'number';

/** Measures may be NaN or infinite (a blow-up is shown, not hidden), or null when not reported. */
function measures(v: unknown): WireMeasures | null {
  if (!isObj(v)) return null;
  const keys = ['drift', 'tv', 'energy', 'changeRms', 'changeMax'] as const;
  if (!keys.every((k) => numOrNullish(v[k]))) return null;
  return { drift: v.drift as number | null, tv: v.tv as number | null, energy: v.energy as number | null, changeRms: v.changeRms as number | null, changeMax: v.changeMax as number | null };
}

function sideMetrics(v: unknown): WireSideMetrics | null {
  if (!isObj(v) || !numOrNullish(v.psnr) || !numOrNullish(v.ssim) || !numOrNullish(v.tv)) return null;
  return { psnr: v.psnr, ssim: v.ssim, tv: v.tv };
}

function pinned(v: unknown): WirePinned | null {
  if (!isObj(v) || !str(v.label, 4096) || !int(v.step) || !num(v.t) || !str(v.field, 200) || !int(v.fullWidth, 1) || !int(v.fullHeight, 1)) return null;
  if (!int(v.width, 1) || !int(v.height, 1) || !str(v.pinnedAt, 100)) return null;
  const data = floats(v.data, v.width * v.height);
  const metrics = sideMetrics(v.metrics);
  if (!data || !metrics) return null;
  return {
    label: v.label, step: v.step, t: v.t, field: v.field, fullWidth: v.fullWidth, fullHeight: v.fullHeight, width: v.width, height: v.height,
    data, metrics, pinnedAt: v.pinnedAt,
  };
}

/** Largest frequency-map grid side the page accepts. */
export const MAX_SPECTRUM_SIDE = 1024;

/** Checks a message the host sent (the webview's side of "validated on receipt"); null means "ignore it". */
export function validateToPreview(raw: unknown): ToPreview.Type | null {
  if (!isObj(raw) || !str(raw.source, 4096) || typeof raw.type !== 'string') return null;
  const source = raw.source;
  switch (raw.type) {
    case 'scheme': {
      if (!str(raw.fileName, 1000) || (raw.dims !== 1 && raw.dims !== 2) || !Array.isArray(raw.fields) || !raw.fields.every((f) => str(f, 200))) return null;
      if (!Array.isArray(raw.knobs) || !int(raw.steps) || !isObj(raw.current) || !str(raw.inputLabel, 4096)) return null;
      const knobs = raw.knobs.map(knob);
      const dt = knob(raw.dt);
      const values = knobValues(raw.current.values);
      const input = validInput(raw.input);
      if (knobs.some((k) => k === null) || !dt || !values || !num(raw.current.dt) || !input) return null;
      let fit: ToPreview.Scheme['fit'];
      if (raw.fit !== undefined) {
        if (!isObj(raw.fit) || typeof raw.fit.ready !== 'boolean' || !str(raw.fit.note, 1000)) return null;
        fit = { ready: raw.fit.ready, note: raw.fit.note };
      }
      if (raw.derivative !== undefined && raw.derivative !== null && !name(raw.derivative)) return null;
      const derivative = raw.derivative === undefined ? {} : { derivative: raw.derivative as string | null };
      let namedInputs: NamedInputSpec[] | undefined;
      if (raw.namedInputs !== undefined) {
        if (!Array.isArray(raw.namedInputs) || raw.namedInputs.length > 50) return null;
        namedInputs = [];
        for (const n of raw.namedInputs) {
          const choice = isObj(n) ? validNamedInput(n.choice) : null;
          if (!isObj(n) || !choice || !inputName(n.name) || !str(n.label, 4096)) return null;
          namedInputs.push({ name: n.name, choice, label: n.label });
        }
      }
      return {
        type: 'scheme', source, fileName: raw.fileName, dims: raw.dims, fields: raw.fields as string[], knobs: knobs as KnobSpec[], dt,
        steps: raw.steps, current: { values, dt: raw.current.dt }, input, inputLabel: raw.inputLabel, ...(fit ? { fit } : {}),
        ...(namedInputs ? { namedInputs } : {}), ...derivative,
      };
    }
    case 'runStarted':
      if (!int(raw.runId) || !int(raw.width, 1) || !int(raw.height, 1) || !int(raw.frameWidth, 1) || !int(raw.frameHeight, 1)) return null;
      if (!int(raw.steps) || !int(raw.every) || !num(raw.dt) || !str(raw.field, 200) || typeof raw.hasReference !== 'boolean') return null;
      return {
        type: 'runStarted', source, runId: raw.runId, width: raw.width, height: raw.height, frameWidth: raw.frameWidth, frameHeight: raw.frameHeight,
        steps: raw.steps, every: raw.every, dt: raw.dt, field: raw.field, hasReference: raw.hasReference,
      };
    case 'frame': {
      if (!int(raw.runId) || !str(raw.field, 200) || !int(raw.step) || typeof raw.t !== 'number' || !int(raw.width, 1) || !int(raw.height, 1)) return null;
      const data = floats(raw.data, raw.width * raw.height);
      const stats = statsOf(raw.stats);
      if (!data || !stats || !(raw.psnr === null || typeof raw.psnr === 'number')) return null;
      const m = raw.measures === undefined ? undefined : measures(raw.measures);
      if (m === null) return null;
      if (raw.wrt !== undefined && !name(raw.wrt)) return null;
      let colour: ToPreview.Frame['colour'];
      if (raw.colour !== undefined) {
        if (!isObj(raw.colour)) return null;
        const n = raw.width * raw.height;
        const red = floats(raw.colour.red, n), green = floats(raw.colour.green, n), blue = floats(raw.colour.blue, n);
        if (!red || !green || !blue) return null;
        colour = { red, green, blue };
      }
      return {
        type: 'frame', source, runId: raw.runId, field: raw.field, step: raw.step, t: raw.t, width: raw.width, height: raw.height, data, stats, psnr: raw.psnr,
        ...(colour ? { colour } : {}),
        ...(raw.wrt !== undefined ? { wrt: raw.wrt as string } : {}),
        ...(m ? { measures: m } : {}),
      };
    }
    case 'finding': {
      const f = finding(raw.finding);
      return f && int(raw.runId) ? { type: 'finding', source, runId: raw.runId, finding: f } : null;
    }
    case 'runEnded': {
      const statuses: readonly unknown[] = ['done', 'cancelled', 'blow-up', 'failed'];
      if (!int(raw.runId) || !statuses.includes(raw.status) || !int(raw.stepsDone) || !(raw.message === null || str(raw.message))) return null;
      let best: { step: number; psnr: number } | null = null;
      if (raw.best !== null) {
        if (!isObj(raw.best) || !int(raw.best.step) || typeof raw.best.psnr !== 'number') return null;
        best = { step: raw.best.step, psnr: raw.best.psnr };
      }
      return { type: 'runEnded', source, runId: raw.runId, status: raw.status as ToPreview.RunEnded['status'], stepsDone: raw.stepsDone, best, message: raw.message };
    }
    case 'verdict': {
      const v = verdict(raw.verdict);
      return v && int(raw.runId) ? { type: 'verdict', source, runId: raw.runId, verdict: v } : null;
    }
    case 'problems': {
      if (!int(raw.count)) return null;
      if (raw.first === null) return { type: 'problems', source, count: raw.count, first: null };
      if (!isObj(raw.first) || !str(raw.first.message) || !str(raw.first.code, 200)) return null;
      const r = range(raw.first.range);
      return r ? { type: 'problems', source, count: raw.count, first: { message: raw.first.message, code: raw.first.code, range: r } } : null;
    }
    case 'weights': {
      if (!int(raw.runId) || !int(raw.step) || !int(raw.x) || !int(raw.y) || !str(raw.field, 200) || !int(raw.radius) || (raw.dims !== 1 && raw.dims !== 2)) return null;
      const side = 2 * raw.radius + 1;
      const cells = raw.dims === 2 ? side * side : side;
      if (!Array.isArray(raw.grid) || raw.grid.length !== cells || !raw.grid.every((w) => typeof w === 'number')) return null;
      if (typeof raw.sum !== 'number' || typeof raw.centre !== 'number' || typeof raw.negativeCentre !== 'boolean' || typeof raw.value !== 'number' || !int(raw.others)) return null;
      return {
        type: 'weights', source, runId: raw.runId, step: raw.step, x: raw.x, y: raw.y, field: raw.field, radius: raw.radius, dims: raw.dims,
        grid: raw.grid as number[], sum: raw.sum, centre: raw.centre, negativeCentre: raw.negativeCentre, value: raw.value, others: raw.others,
      };
    }
    case 'impulse':
      if (!int(raw.runId) || !int(raw.steps) || !num(raw.t) || !Array.isArray(raw.sigma) || !raw.sigma.every(num) || !num(raw.heatSigma) || typeof raw.sum !== 'number' || typeof raw.truncated !== 'boolean') return null;
      return { type: 'impulse', source, runId: raw.runId, steps: raw.steps, t: raw.t, sigma: raw.sigma as number[], heatSigma: raw.heatSigma, sum: raw.sum, truncated: raw.truncated };
    case 'profile': {
      if (!int(raw.runId) || !int(raw.row) || !int(raw.step)) return null;
      const before = floats(raw.before);
      const after = floats(raw.after, before?.length);
      return before && after ? { type: 'profile', source, runId: raw.runId, row: raw.row, step: raw.step, before, after } : null;
    }
    case 'fit': {
      const statuses: readonly unknown[] = ['running', 'done', 'cancelled', 'failed'];
      if (!int(raw.fitId) || !statuses.includes(raw.status) || !int(raw.evaluations) || (raw.metric !== 'psnr' && raw.metric !== 'ssim')) return null;
      const values = raw.values === null ? null : knobValues(raw.values);
      if (raw.values !== null && !values) return null;
      if (!(raw.step === null || int(raw.step)) || !(raw.best === null || typeof raw.best === 'number') || !(raw.noisy === null || typeof raw.noisy === 'number')) return null;
      if (!(raw.message === null || str(raw.message, 10_000))) return null;
      return {
        type: 'fit', source, fitId: raw.fitId, status: raw.status as ToPreview.Fit['status'], evaluations: raw.evaluations, metric: raw.metric,
        values, step: raw.step, best: raw.best, noisy: raw.noisy, message: raw.message,
      };
    }
    case 'notice':
      if ((raw.level !== 'info' && raw.level !== 'error') || !str(raw.text, 10_000)) return null;
      return { type: 'notice', source, level: raw.level, text: raw.text };
    case 'spectrum': {
      if (!int(raw.runId) || (raw.dims !== 1 && raw.dims !== 2) || !int(raw.cols, 1) || !int(raw.rows, 1)) return null;
      if (raw.cols > MAX_SPECTRUM_SIDE || raw.rows > MAX_SPECTRUM_SIDE || (raw.dims === 1 && raw.rows !== 1)) return null;
      const amp = floats(raw.amp, raw.cols * raw.rows);
      if (!amp || !num(raw.lo) || !num(raw.hi) || !(raw.hi > raw.lo) || !str(raw.note, 10_000)) return null;
      if (!Array.isArray(raw.edge) || raw.edge.length % 4 !== 0 || raw.edge.length > 4 * 65536 || !raw.edge.every(num)) return null;
      if (!isObj(raw.peak) || typeof raw.peak.value !== 'number' || !Array.isArray(raw.peak.theta) || !raw.peak.theta.every(num)) return null;
      let isotropy: ToPreview.Spectrum['isotropy'] = null;
      if (raw.isotropy !== null) {
        const iso = raw.isotropy;
        if (!isObj(iso) || !num(iso.radius) || !Array.isArray(iso.angles) || !Array.isArray(iso.error) || iso.angles.length !== iso.error.length) return null;
        if (iso.angles.length > 4096 || !iso.angles.every(num) || !iso.error.every((e) => typeof e === 'number')) return null;
        isotropy = { radius: iso.radius, angles: iso.angles as number[], error: iso.error as number[] };
      }
      return {
        type: 'spectrum', source, runId: raw.runId, dims: raw.dims, cols: raw.cols, rows: raw.rows, amp, lo: raw.lo, hi: raw.hi, edge: raw.edge as number[],
        peak: { value: raw.peak.value, theta: raw.peak.theta as number[] }, isotropy, note: raw.note,
      };
    }
    case 'influence': {
      if (!int(raw.runId) || !int(raw.step) || !int(raw.x) || !int(raw.y) || !int(raw.steps) || !str(raw.field, 200)) return null;
      if (!int(raw.x0) || !int(raw.y0) || !int(raw.width, 1) || !int(raw.height, 1)) return null;
      const data = floats(raw.data, raw.width * raw.height);
      if (!data || typeof raw.sum !== 'number' || !num(raw.peak) || raw.peak < 0 || !(raw.note === null || str(raw.note, 10_000))) return null;
      return {
        type: 'influence', source, runId: raw.runId, step: raw.step, x: raw.x, y: raw.y, steps: raw.steps, field: raw.field,
        x0: raw.x0, y0: raw.y0, width: raw.width, height: raw.height, data, sum: raw.sum, peak: raw.peak, note: raw.note,
      };
    }
    case 'approximates': {
      if (!int(raw.runId) || !str(raw.text, 10_000) || !Array.isArray(raw.details) || raw.details.length > 100 || !raw.details.every((d) => str(d, 10_000))) return null;
      if (!Array.isArray(raw.warnings) || raw.warnings.length > 100) return null;
      const warnings: { severity: 'warning' | 'info'; message: string; range: WireRange | null }[] = [];
      for (const w of raw.warnings) {
        if (!isObj(w) || (w.severity !== 'warning' && w.severity !== 'info') || !str(w.message, 10_000)) return null;
        const r = w.range === null ? null : range(w.range);
        if (w.range !== null && !r) return null;
        warnings.push({ severity: w.severity, message: w.message, range: r });
      }
      return { type: 'approximates', source, runId: raw.runId, text: raw.text, details: raw.details as string[], warnings };
    }
    case 'baseline': {
      if (raw.pinned === null) return { type: 'baseline', source, pinned: null };
      const p = pinned(raw.pinned);
      return p ? { type: 'baseline', source, pinned: p } : null;
    }
    case 'comparison': {
      if (!int(raw.runId) || !int(raw.step) || typeof raw.comparable !== 'boolean' || !(raw.note === null || str(raw.note, 10_000))) return null;
      const a = sideMetrics(raw.pinned);
      const b = sideMetrics(raw.current);
      const d = sideMetrics(raw.delta);
      if (!a || !b || !d) return null;
      let between: ToPreview.Comparison['between'] = null;
      if (raw.between !== null) {
        if (!isObj(raw.between) || typeof raw.between.psnr !== 'number' || typeof raw.between.ssim !== 'number') return null;
        between = { psnr: raw.between.psnr, ssim: raw.between.ssim };
      }
      return { type: 'comparison', source, runId: raw.runId, step: raw.step, comparable: raw.comparable, note: raw.note, pinned: a, current: b, delta: d, between };
    }
    default:
      return null;
  }
}
