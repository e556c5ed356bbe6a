// The runner: allocates padded buffers for a checked scheme, initialises fields, steps the compiled kernels,
// runs the monitors after each step, and records frame statistics. In-process; worker/ wraps it in a thread.
// Frame statistics carry the per-step measures (FieldStats: drift of the mean, total variation, Dirichlet energy,
// change since the previous step, RMS and max); a run with a `stopChange` tolerance (`until change < tol`) stops
// after the first step whose RMS change is below it, and RunResult.stopReason says why any run ended.
// Must not import vscode, the DOM or Node modules (so it also runs inside the engine worker unchanged).

import ndarray from 'ndarray';
import type { NdArray } from 'ndarray';
import type { StabilityReport } from '../analysis/stability';
import { psnr as psnrOf, ssim as ssimOf } from '../analysis/metrics';
import { STOP_CHANGE_CAP, type CheckedScheme } from '../notation/scheme';
import { fillGhosts, makeGeometry, planGhosts, readInterior, writeInterior, type GhostPlan } from './boundary';
import { blurInto, gaussianTaps } from './blur';
import { defaultBackend } from './wasm/select';
import { jsBackend } from './jsBackend';
import { sensitivityKey, Tangents } from './sensitivity';
import { extremumPrinciple, type ExtremumDecision } from './monitorPolicy';
import { blurRadius, EngineError, planHalo, type HaloPlan } from './plan';
import type {
  CompiledScheme, DType, FieldArray, FieldStats, FrameStats, Geometry, KernelBackend, KernelContext, RunWarning, StepLimits, StopReason, WarningKind,
} from './types';

/** A grey image, row-major: pixel (x, y) is data[y * width + x]. */
export interface RunImage {
  readonly data: ArrayLike<number>;
  readonly width: number;
  readonly height: number;
}

export interface MonitorOptions {
  /**
   * The new-extremum monitor. 'auto' (the default) lets the analysis decide: on for schemes whose frozen weights
   * are non-negative and sum to 1 with no source (monitorPolicy.ts); true or false force it.
   */
  readonly extremumCheck?: boolean | 'auto';
  /** A stability report the caller already has (analyseStability), so 'auto' does not analyse the scheme again. */
  readonly stability?: StabilityReport;
  /** Initial data range for the extremum check; by default the range of the initial fields (and fixed boundary values). */
  readonly initialMin?: number;
  readonly initialMax?: number;
  /** Growth bound = growthFactor × max(1, initial max |field| over all fields); default factor 1e3. */
  readonly growthFactor?: number;
  /** An absolute growth bound, overriding the factor. */
  readonly growthBound?: number;
}

export interface RunOptions {
  /** The picture for `field u = image` fields; its size is the grid size. */
  readonly image?: RunImage | null;
  /**
   * The picture of each `image` field by field name (named inputs and channels, as bound by images/inputs.ts
   * `bindInputs`); all of one size. A field missing here falls back to `image` when it reads the main input
   * (every channel of a grey picture is its grey value; alpha is then 1); a named input has no fallback.
   */
  readonly fieldImages?: Readonly<Record<string, RunImage>> | null;
  /** Grid size when there is no image (default 64×64 in 2d, 256×1 in 1d). */
  readonly width?: number;
  readonly height?: number;
  /** Parameter overrides by name (unknown names are an error). */
  readonly params?: Readonly<Record<string, number>>;
  readonly dt?: number;
  readonly steps?: number;
  readonly dtype?: DType;
  /** Record a frame every `every` steps (and always at step 0 and at the last step); 0 records only those two. */
  readonly every?: number;
  readonly monitors?: MonitorOptions;
  /** A clean image: frames then carry PSNR (and SSIM when `ssim` is set) of the primary field against it. */
  readonly reference?: RunImage | null;
  readonly ssim?: boolean;
  readonly backend?: KernelBackend;
  /** Per-step measures in every recorded frame (drift, TV, energy, change); default true. */
  readonly measures?: boolean;
  /**
   * Stop after the first step whose RMS change ‖uⁿ⁺¹ − uⁿ‖ (the largest over the updated fields) is below this;
   * default: the scheme's `until change < tol`, else none. `steps` is then the safety cap (see DEFAULT_STEP_CAP).
   */
  readonly stopChange?: number | null;
  /**
   * Sensitivity mode: forward-mode derivatives of every field with respect to these names (declared params and/or
   * `dt`), carried through every step (sensitivity.ts). Runs on the JavaScript dual kernels whatever `backend` says;
   * the result's backend is then `js-tangents`.
   */
  readonly sensitivity?: readonly string[];
}

/** The step cap of `until change < tol` when nothing else sets one; reaching it is a `no-convergence` warning. */
export const DEFAULT_STEP_CAP = STOP_CHANGE_CAP;

export interface Frame {
  readonly stats: FrameStats;
  /** Copies of every field's values at this step, as [height, width] views; in sensitivity mode also their derivatives (sensitivityKey). */
  readonly fields: Readonly<Record<string, NdArray<FieldArray>>>;
}

export interface RunCallbacks {
  onProgress?(step: number, total: number): void;
  onFrame?(frame: Frame): void;
  onWarning?(w: RunWarning): void;
  /** Checked once per step; returning true stops the run after the current step. */
  shouldCancel?(): boolean;
  /**
   * Set when onProgress reads the run's fields (e.g. to measure every step): the runner then takes single steps.
   * Otherwise a backend may take several steps in one call (passes of two steps, a few milliseconds at most): the
   * fields are at the last of them when the call returns, onProgress is called for each of its steps in order, and
   * shouldCancel is asked after the call, so a cancel ends the run at the call's last step.
   */
  readonly everyStep?: boolean;
}

export type RunStatus = 'done' | 'cancelled' | 'blow-up';

export interface RunResult {
  readonly status: RunStatus;
  readonly stepsDone: number;
  readonly steps: number;
  readonly dt: number;
  readonly params: Readonly<Record<string, number>>;
  readonly dtype: DType;
  readonly backend: string;
  readonly stepSeconds: number;
  readonly frames: FrameStats[];
  readonly warnings: RunWarning[];
  readonly best?: { readonly step: number; readonly psnr: number };
  readonly stopReason?: StopReason;
  /** The tolerance of the change rule, when the run had one. */
  readonly stopChange?: number;
}

/** Padded buffers may hold this many times the grid's values, or this many values, whichever is larger. */
export const MAX_PAD_FACTOR = 16;
export const MAX_PAD_CELLS = 1 << 22;

const FLOAT32_EPS = 2 ** -23;
const FLOAT64_EPS = 2 ** -52;
const FLOAT32_MAX = 3.4028234663852886e38;
/** A backend call of several steps (stepPasses) is kept near this long, so progress and cancels stay prompt. */
const PASS_CALL_SECONDS = 0.004;
/** And at most this many passes per call (backends take this many: the WebAssembly one has room for 64). */
const MAX_PASSES_PER_CALL = 64;

function ulpOf(x: number, dtype: DType): number {
  const a = Math.abs(x);
  const eps = dtype === 'float32' ? FLOAT32_EPS : FLOAT64_EPS;
  if (a === 0 || !Number.isFinite(a)) return eps;
  return 2 ** Math.floor(Math.log2(a)) * eps;
}

/** The row a 1d scheme runs on: row ⌊height/2⌋, the same row the stability analysis uses (stabilityState.ts). */
export function middleRow(img: RunImage): RunImage {
  if (img.height === 1) return img;
  const row = Math.floor(img.height / 2);
  const data = new Float64Array(img.width);
  for (let x = 0; x < img.width; x++) data[x] = img.data[row * img.width + x];
  return { width: img.width, height: 1, data };
}

function nowSeconds(): number {
  return performance.now() / 1000;
}

export class Run {
  readonly scheme: CheckedScheme;
  readonly compiled: CompiledScheme;
  readonly geometry: Geometry;
  readonly dtype: DType;
  readonly dt: number;
  readonly steps: number;
  readonly params: Readonly<Record<string, number>>;
  readonly halo: HaloPlan;
  /** Current step (0 before the first). */
  stepIndex = 0;
  stepSeconds = 0;
  status: RunStatus | 'running' = 'running';
  readonly warnings: RunWarning[] = [];
  readonly frames: FrameStats[] = [];

  private readonly ctx: KernelContext;
  private readonly ghosts: GhostPlan[];
  private readonly updated: number[];
  /** Cleared when the backend declines two-step passes for this run (see stepPasses). */
  private pairing = true;
  /** Seconds per two-step pass, measured on the last call (0: none yet), to keep a call near PASS_CALL_SECONDS. */
  private passSeconds = 0;
  /** The step at which a pass was found not quiet: from there the runner takes single steps until the next call. */
  private noPassAt = -1;
  /** The range a quiet step stays in, per field (see quietLimits). */
  private readonly limits: StepLimits;
  private readonly blurTaps: (Float64Array | null)[];
  private readonly scratch: FieldArray | null;
  private readonly every: number;
  private readonly reference: RunImage | null;
  private readonly wantSsim: boolean;
  private readonly primary: number;
  /** The new-extremum bounds once decided (undefined: not yet; null: the monitor is off). */
  private extremumBounds: { lo: number; hi: number } | null | undefined;
  private decision: ExtremumDecision | null = null;
  /** What deciding needs: the caller's stability report, if any, and the initial range with its slack. */
  private readonly extremumInputs: { want: boolean | 'auto'; stability: StabilityReport | undefined; lo: number; hi: number };
  private readonly growthBound: number;
  private readonly warned = new Set<string>();
  private best: { step: number; psnr: number } | undefined;
  private readonly measures: boolean;
  readonly stopChange: number | null;
  private converged = false;
  private readonly initialMeans: number[];
  /** RMS change of the last step (largest over updated fields), when the change rule needs it every step. */
  lastChangeRms = NaN;
  /** The tangents of sensitivity mode (null otherwise). */
  readonly tangents: Tangents | null;

  constructor(scheme: CheckedScheme, opts: RunOptions = {}) {
    this.scheme = scheme;
    this.dtype = opts.dtype ?? 'float32';
    // Without a choice: the SIMD kernels where the scheme allows (wasm/select.ts), else the JavaScript ones.
    const wrt = opts.sensitivity ?? null;
    // The SIMD kernels carry no tangents: sensitivity mode runs on the JavaScript dual kernels.
    const backend = wrt ? jsBackend : opts.backend ?? defaultBackend();
    this.compiled = backend.compile(scheme, { dtype: this.dtype });

    // Parameters: declared values, then overrides; passed to kernels as a vector so sliders never recompile.
    const values = new Map(scheme.params.map(p => [p.name, p.value]));
    for (const [name, v] of Object.entries(opts.params ?? {})) {
      if (!values.has(name)) throw new EngineError(`unknown parameter '${name}'`);
      if (typeof v !== 'number' || Number.isNaN(v)) throw new EngineError(`parameter '${name}' needs a number`);
      values.set(name, v);
    }
    this.params = Object.fromEntries(values);
    this.dt = opts.dt ?? scheme.dt;
    if (!Number.isFinite(this.dt)) throw new EngineError('dt must be a finite number');
    // `until t = T` keeps T fixed when dt moves (numerics.md, "Time").
    const defaultSteps = opts.dt !== undefined && scheme.untilTime !== null ? Math.round(scheme.untilTime / this.dt) : scheme.steps;
    this.stopChange = opts.stopChange !== undefined ? opts.stopChange : scheme.untilChange ?? null;
    if (this.stopChange !== null && !(this.stopChange > 0 && Number.isFinite(this.stopChange))) throw new EngineError('the change tolerance must be a finite number > 0');
    this.steps = opts.steps ?? (this.stopChange !== null && scheme.untilChange == null ? DEFAULT_STEP_CAP : defaultSteps);
    if (!Number.isInteger(this.steps) || this.steps < 0) throw new EngineError('steps must be a whole number ≥ 0');

    const perField = opts.fieldImages ?? {};
    // The picture of each image field: its own (named input or channel), else the main image (see RunOptions).
    const fieldPictures: (RunImage | null)[] = scheme.fields.map(f => {
      if (f.init.kind !== 'image') return null;
      const own = Object.prototype.hasOwnProperty.call(perField, f.name) ? perField[f.name] : null;
      if (own) return own;
      if (f.init.input !== null) throw new EngineError(`field '${f.name}' reads the input "${f.init.input}", but no picture was given for it`);
      if (!opts.image) throw new EngineError('this scheme has a field initialised from an image, but no image was given');
      if (f.init.channel === 'alpha') return { width: opts.image.width, height: opts.image.height, data: new Float32Array(opts.image.data.length).fill(1) };
      return opts.image;
    });
    const given = opts.image ?? fieldPictures.find(p => p !== null) ?? null;
    for (const p of [given, ...fieldPictures]) {
      if (p && p.data.length !== p.width * p.height) throw new EngineError('the image data does not match its size');
      if (p && given && (p.width !== given.width || p.height !== given.height)) throw new EngineError(`the field pictures must all have one size (${given.width}×${given.height} and ${p.width}×${p.height} given)`);
    }
    // In 1d the field is a single row: an image contributes its middle row, as the analysis assumes (contracts, issue 2).
    const image = given && scheme.dims === 1 ? middleRow(given) : given;
    const width = image ? image.width : opts.width ?? (scheme.dims === 2 ? 64 : 256);
    const height = image ? image.height : scheme.dims === 1 ? 1 : opts.height ?? 64;
    if (!(Number.isInteger(width) && Number.isInteger(height) && width >= 1 && height >= 1)) {
      throw new EngineError(`the grid must be at least 1×1 pixels, got ${width}×${height}`);
    }

    this.halo = planHalo(scheme, values, this.dt);
    const g = makeGeometry(width, height, this.halo.halo, scheme.dims);
    // A blur width or offsets far larger than the image would make the padded buffers (and the ghost filling of every
    // step) enormous for nothing: refuse with the reason instead of allocating gigabytes or failing inside the runtime.
    const cells = g.pw * g.ph;
    if (!(cells <= Math.max(MAX_PAD_FACTOR * width * height, MAX_PAD_CELLS))) {
      const why = this.halo.letSigmas.some((s) => s !== null && blurRadius(s) > 0) ? 'the blur width' : 'the neighbour offsets';
      throw new EngineError(
        `${why} needs a border of ${this.halo.halo} pixels around the ${width}×${height} grid, which makes buffers of ${g.pw}×${g.ph} values ` +
        `(the limit is ${MAX_PAD_FACTOR} times the grid or ${MAX_PAD_CELLS} values); use a smaller blur width or a larger image`,
      );
    }
    this.geometry = g;
    // A backend may place the buffers itself (shared WebAssembly memory); at most: cur + next per field, lets, blur scratch.
    const pool = this.compiled.allocateBuffers?.(g, 2 * scheme.fields.length + scheme.lets.length + 1) ?? [];
    const alloc = (): FieldArray => pool.pop() ?? (this.dtype === 'float32' ? new Float32Array(g.pw * g.ph) : new Float64Array(g.pw * g.ph));

    const cur = scheme.fields.map(() => alloc());
    // Fields without an update stay constant: their "next" buffer is the current one and is never written.
    const next = scheme.fields.map((f, k) => (f.updated ? alloc() : cur[k]));
    const lets = scheme.lets.map(() => alloc());
    this.blurTaps = this.halo.letSigmas.map(s => (s === null ? null : gaussianTaps(s)));
    this.scratch = this.blurTaps.some(t => t !== null) ? alloc() : null;
    const n = scheme.fields.length;
    this.limits = { lo: new Float64Array(n), hi: new Float64Array(n) };
    this.ctx = {
      cur, next, lets,
      params: Float64Array.from(scheme.params.map(p => values.get(p.name) as number)),
      dt: this.dt, t: 0,
      monitor: { min: new Float64Array(n), max: new Float64Array(n), bad: new Float64Array(n) },
    };
    this.updated = [];
    scheme.fields.forEach((f, k) => {
      if (f.updated) this.updated.push(k);
    });
    this.ghosts = scheme.fields.map(f => planGhosts(g, f.boundary));

    // Initial values, in declaration order (an initialiser may read earlier fields at its own pixel).
    scheme.fields.forEach((f, k) => {
      if (f.init.kind === 'image') {
        const p = fieldPictures[k] as RunImage;
        writeInterior(cur[k], g, (scheme.dims === 1 ? middleRow(p) : p).data);
      }
      else this.compiled.initField(k, g, this.ctx);
      fillGhosts(cur[k], g, this.ghosts[k]);
      // A fixed halo is written once; kernels never write ghost cells, so it survives every swap.
      if (next[k] !== cur[k]) fillGhosts(next[k], g, this.ghosts[k]);
    });
    this.tangents = wrt ? new Tangents(scheme, wrt, g, this.halo, this.dtype, this.ghosts) : null;
    this.tangents?.init(this.ctx, this.ghosts);

    // Monitor set-up from the initial state.
    let lo = Infinity, hi = -Infinity, maxAbs = 0;
    scheme.fields.forEach((f, k) => {
      const s = this.fieldStats(k);
      lo = Math.min(lo, s.min);
      hi = Math.max(hi, s.max);
      maxAbs = Math.max(maxAbs, Math.abs(s.min), Math.abs(s.max));
      if (f.boundary.kind === 'fixed') {
        lo = Math.min(lo, f.boundary.value);
        hi = Math.max(hi, f.boundary.value);
      }
    });
    this.initialMeans = scheme.fields.map((_, k) => this.fieldStats(k).mean);
    this.measures = opts.measures ?? true;
    const m = opts.monitors ?? {};
    const wantExtremum = m.extremumCheck ?? 'auto';
    {
      const l = m.initialMin ?? lo, h = m.initialMax ?? hi;
      // Rounding may overshoot by an ulp or two; 4 ulps of the data range is the agreed slack (numerics.md, "Monitors").
      const tol = 4 * ulpOf(Math.max(Math.abs(l), Math.abs(h)), this.dtype);
      this.extremumInputs = { want: wantExtremum, stability: m.stability, lo: l - tol, hi: h + tol };
    }
    this.growthBound = m.growthBound ?? (m.growthFactor ?? 1e3) * Math.max(1, maxAbs);

    this.every = Math.max(0, Math.floor(opts.every ?? 0));
    const ref = opts.reference ?? null;
    this.reference = ref && scheme.dims === 1 && given && ref.width === given.width && ref.height === given.height ? middleRow(ref) : ref;
    if (this.reference && (this.reference.width !== width || this.reference.height !== height)) {
      throw new EngineError('the reference image must have the size of the grid');
    }
    this.wantSsim = opts.ssim ?? false;
    // PSNR is measured on the field that holds the picture: the first image field, else the first updated one.
    const img = scheme.fields.findIndex(f => f.init.kind === 'image');
    this.primary = img >= 0 ? img : Math.max(0, scheme.fields.findIndex(f => f.updated));
  }

  /**
   * Whether the new-extremum monitor runs, and why (from the analysis unless the caller forced it). Decided on first
   * use, which is after the start frame: a live run shows its start picture without waiting for the analysis, and the
   * decision still comes before the first step's values are checked, so every step is monitored.
   */
  get extremumDecision(): ExtremumDecision {
    if (!this.decision) {
      const x = this.extremumInputs;
      this.decision = x.want === 'auto'
        ? extremumPrinciple(this.scheme, x.stability)
        : { applies: x.want, reason: x.want ? 'forced on by the caller' : 'turned off by the caller' };
      this.extremumBounds = this.decision.applies ? { lo: x.lo, hi: x.hi } : null;
    }
    return this.decision;
  }

  /** Decided by then: every step asks for extremumDecision before its timed part. */
  private get extremum(): { lo: number; hi: number } | null {
    return this.extremumBounds ?? null;
  }

  get t(): number {
    return this.stepIndex * this.dt;
  }

  /** One step: lets, fused updates, buffer swap, halo refill, monitors. Returns false once the run has stopped. */
  step(): boolean {
    if (this.status !== 'running') return false;
    // The monitors' static analysis runs before the first step, outside stepSeconds (it is not a monitor's cost).
    void this.extremumDecision;
    const t0 = nowSeconds();
    const { ctx, geometry: g, scheme } = this;
    ctx.t = this.stepIndex * this.dt;
    // Sensitivity mode: the dual kernels compute the lets and updates with their tangents; the plain ones stand by.
    if (this.tangents) this.tangents.step(ctx, this.stepIndex, this.scratch);
    for (let k = 0; !this.tangents && k < scheme.lets.length; k++) {
      const l = scheme.lets[k];
      const taps = this.blurTaps[k];
      if (l.kind === 'blur' && taps) {
        const src = scheme.symbols.get(l.source) === 'let'
          ? ctx.lets[scheme.lets.findIndex(x => x.name === l.source)]
          : ctx.cur[scheme.fields.findIndex(f => f.name === l.source)];
        blurInto(ctx.lets[k], src, this.scratch as FieldArray, g, taps, this.halo.letExtents[k], scheme.dims);
      } else this.compiled.computeLet(k, g, ctx, this.halo.letExtents[k]);
    }
    if (!this.tangents) this.compiled.update(g, ctx);
    for (const k of this.updated) {
      const tmp = ctx.cur[k];
      ctx.cur[k] = ctx.next[k];
      ctx.next[k] = tmp;
      fillGhosts(ctx.cur[k], g, this.ghosts[k]);
      this.tangents?.swap(k);
    }
    this.stepIndex++;
    this.checkMonitors();
    if (this.stopChange !== null && this.status === 'running') {
      let rms = 0;
      for (const k of this.updated) rms = Math.max(rms, this.rmsChangeOf(k));
      this.lastChangeRms = rms;
      if (rms < this.stopChange) {
        this.converged = true;
        this.status = 'done';
      } else if (this.stepIndex >= this.steps) {
        const k = this.updated[0];
        if (k !== undefined) {
          this.warn('no-convergence', k, { x: -1, y: -1 }, `The RMS change per step was still ${rms.toPrecision(3)} after ${this.stepIndex} steps (the cap), above the tolerance ${this.stopChange}; the run stopped at the cap.`);
        }
      }
    }
    this.stepSeconds += nowSeconds() - t0;
    return this.status === 'running';
  }

  /**
   * Several steps in one call of the backend: passes of two steps (temporal blocking, step s + 1 lives only in
   * per-thread band buffers), when nothing needs a field between them: no lets, no change rule, no frame inside the
   * call (nor at its end when frames measure the change per step, which needs the step before), no sensitivities,
   * no caller reading the fields after every step. A pass counts only when both its steps are quiet (the monitors
   * have nothing to report, see quietLimits); the first pass that is not ends the call with the fields as before it,
   * and the runner takes single steps from there, which find and report the pixel. A call is kept near PASS_CALL_SECONDS so
   * progress and cancellation (asked between calls) stay prompt. Returns false when no pass was taken.
   */
  private stepPasses(cb: RunCallbacks): boolean {
    const c = this.compiled;
    if (cb.everyStep || !this.pairing || !c.updatePasses || this.tangents || this.scheme.lets.length > 0 || this.stopChange !== null) return false;
    if (this.status !== 'running' || this.noPassAt === this.stepIndex) return false;
    // Passes j = 1..P cover steps s + 2j - 1 and s + 2j: no frame at an odd one, nor at an even one before the last.
    const s0 = this.stepIndex;
    // Before the first call, a pass is guessed at 1 ns per pixel and step (simple kernels take less on one core).
    const perPass = this.passSeconds > 0 ? this.passSeconds : 2e-9 * this.geometry.width * this.geometry.height;
    const budget = Math.min(MAX_PASSES_PER_CALL, Math.floor(PASS_CALL_SECONDS / perPass));
    let P = 0;
    while (P < Math.max(1, budget) && s0 + 2 * (P + 1) <= this.steps && !this.frameAt(s0 + 2 * P + 1)) {
      P++;
      if (this.frameAt(s0 + 2 * P)) break;
    }
    // A frame's change measure compares with the step before, which a pass does not keep.
    if (P > 0 && this.measures && this.frameAt(s0 + 2 * P)) P--;
    if (P === 0) return false;
    void this.extremumDecision;
    this.quietLimits();
    const t0 = nowSeconds();
    const { ctx, geometry: g } = this;
    ctx.t = s0 * this.dt;
    const done = c.updatePasses(g, ctx, P, this.limits, this.ghosts);
    if (done < 0) {
      this.pairing = false;
      return false;
    }
    if (done % 2 === 1) {
      for (const k of this.updated) {
        const tmp = ctx.cur[k];
        ctx.cur[k] = ctx.next[k];
        ctx.next[k] = tmp;
      }
    }
    const dt = nowSeconds() - t0;
    this.stepSeconds += dt;
    if (done === P) this.passSeconds = dt / P;
    else this.noPassAt = s0 + 2 * done;
    if (done === 0) return false;
    this.stepIndex += 2 * done;
    for (let k = s0 + 1; k < this.stepIndex; k++) cb.onProgress?.(k, this.steps);
    return true;
  }

  /** The limits of quiet: what checkMonitors tests, per updated field, as one range of values. */
  private quietLimits(): void {
    const big = this.dtype === 'float32' ? FLOAT32_MAX : Number.MAX_VALUE;
    for (const k of this.updated) {
      let lo = -big, hi = big;
      if (!this.warned.has(`growth:${k}`)) (lo = Math.max(lo, -this.growthBound)), (hi = Math.min(hi, this.growthBound));
      const ex = this.extremum;
      if (ex && !this.warned.has(`extremum:${k}`)) (lo = Math.max(lo, ex.lo)), (hi = Math.min(hi, ex.hi));
      this.limits.lo[k] = lo;
      this.limits.hi[k] = hi;
    }
  }

  /** Whether a frame is recorded after step k of a run that goes on (the last step always records one). */
  private frameAt(k: number): boolean {
    return k === this.steps || (this.every > 0 && k % this.every === 0);
  }

  /** One step (several where the backend can, see stepPasses) with its callbacks; false when cancelled before stepping. */
  private advance(cb: RunCallbacks): boolean {
    if (cb.shouldCancel?.()) {
      this.status = 'cancelled';
      return false;
    }
    const before = this.warnings.length;
    if (!this.stepPasses(cb)) this.step();
    for (let k = before; k < this.warnings.length; k++) cb.onWarning?.(this.warnings[k]);
    cb.onProgress?.(this.stepIndex, this.steps);
    const last = this.stepIndex === this.steps || this.status !== 'running';
    if (last || (this.every > 0 && this.stepIndex % this.every === 0)) this.recordFrame(cb);
    return true;
  }

  /** Runs to the end (or cancellation, or blow-up) on the calling thread. */
  runSync(cb: RunCallbacks = {}): RunResult {
    this.recordFrame(cb);
    while (this.stepIndex < this.steps && this.status === 'running') {
      if (!this.advance(cb)) break;
    }
    if (this.status === 'running') this.status = 'done';
    return this.result();
  }

  /** Like runSync, but yields to the event loop about every `sliceMs` so messages (e.g. cancel) get through. */
  async run(cb: RunCallbacks = {}, sliceMs = 30): Promise<RunResult> {
    this.recordFrame(cb);
    let sliceStart = performance.now();
    while (this.stepIndex < this.steps && this.status === 'running') {
      if (!this.advance(cb)) break;
      if (performance.now() - sliceStart > sliceMs) {
        await new Promise<void>(resolve => setTimeout(resolve, 0));
        sliceStart = performance.now();
      }
    }
    if (this.status === 'running') this.status = 'done';
    return this.result();
  }

  /** Why the run ended (or would end now). */
  get stopReason(): StopReason {
    if (this.status === 'blow-up') return 'blow-up';
    if (this.status === 'cancelled') return 'cancelled';
    if (this.converged) return 'change';
    return this.stopChange !== null ? 'cap' : 'steps';
  }

  result(): RunResult {
    return {
      stopReason: this.stopReason,
      ...(this.stopChange !== null ? { stopChange: this.stopChange } : {}),
      status: this.status === 'running' ? 'done' : this.status,
      stepsDone: this.stepIndex,
      steps: this.steps,
      dt: this.dt,
      params: this.params,
      dtype: this.dtype,
      backend: this.tangents ? 'js-tangents' : this.compiled.backend,
      stepSeconds: this.stepSeconds,
      frames: this.frames,
      warnings: this.warnings,
      ...(this.best ? { best: this.best } : {}),
    };
  }

  /** A copy of a field's current values as a [height, width] view. */
  field(name: string): NdArray<FieldArray> {
    const k = this.scheme.fields.findIndex(f => f.name === name);
    if (k < 0) throw new EngineError(`no field '${name}'`);
    return ndarray(this.fieldData(k), [this.geometry.height, this.geometry.width]);
  }

  /** A copy of field k's interior, row-major. */
  fieldData(k: number): FieldArray {
    const g = this.geometry;
    const out = this.dtype === 'float32' ? new Float32Array(g.width * g.height) : new Float64Array(g.width * g.height);
    return readInterior(out, this.ctx.cur[k], g);
  }

  /** Sensitivity mode: d(field)/d(name) at the current step, interior only, row-major (Float64). */
  sensitivityData(field: number, name: string): Float64Array {
    if (!this.tangents) throw new EngineError('this run carries no sensitivities');
    const j = this.tangents.wrt.indexOf(name);
    if (j < 0) throw new EngineError(`this run carries no sensitivity with respect to '${name}'`);
    return this.tangents.data(field, j);
  }

  /** The padded buffers themselves (read-only use: tests and the kernel-weights view). */
  get buffers(): readonly FieldArray[] {
    return this.ctx.cur;
  }

  fieldStats(k: number): FieldStats {
    const g = this.geometry;
    const buf = this.ctx.cur[k];
    let mn = Infinity, mx = -Infinity, sum = 0;
    for (let y = 0; y < g.height; y++) {
      let i = (y + g.haloY) * g.pw + g.haloX;
      for (let x = 0; x < g.width; x++, i++) {
        const v = buf[i];
        if (v < mn) mn = v;
        if (v > mx) mx = v;
        sum += v;
      }
    }
    return { min: mn, max: mx, mean: sum / (g.width * g.height) };
  }

  /**
   * ‖uⁿ − uⁿ⁻¹‖ of updated field k over the interior, RMS and max. After a step the buffer swapped out
   * (ctx.next) holds the previous values, so this is valid until the next step.
   */
  changeOf(k: number): { rms: number; max: number } {
    const g = this.geometry;
    const a = this.ctx.cur[k], b = this.ctx.next[k];
    if (a === b || this.stepIndex === 0) return { rms: 0, max: 0 };
    let s = 0, mx = 0;
    for (let y = 0; y < g.height; y++) {
      let i = (y + g.haloY) * g.pw + g.haloX;
      for (let x = 0; x < g.width; x++, i++) {
        const d = a[i] - b[i];
        s += d * d;
        const ad = Math.abs(d);
        if (ad > mx || Number.isNaN(ad)) mx = ad;
      }
    }
    return { rms: Math.sqrt(s / (g.width * g.height)), max: mx };
  }

  /** The RMS part of changeOf alone (the change rule runs it every step). */
  private rmsChangeOf(k: number): number {
    const g = this.geometry;
    const a = this.ctx.cur[k], b = this.ctx.next[k];
    if (a === b) return 0;
    let s = 0;
    for (let y = 0; y < g.height; y++) {
      const i0 = (y + g.haloY) * g.pw + g.haloX, i1 = i0 + g.width;
      for (let i = i0; i < i1; i++) {
        const d = a[i] - b[i];
        s += d * d;
      }
    }
    return Math.sqrt(s / (g.width * g.height));
  }

  /**
   * Total variation and Dirichlet energy of field k read from its padded buffer, with the forward differences of
   * analysis/metrics.ts (zero across the last column and row): the same numbers without copying the field.
   */
  private gradientMeasures(k: number): { tv: number; energy: number } {
    const g = this.geometry;
    const buf = this.ctx.cur[k];
    let tv = 0, e = 0;
    for (let y = 0; y < g.height; y++) {
      const row = (y + g.haloY) * g.pw + g.haloX;
      const lastRow = y === g.height - 1;
      for (let x = 0; x < g.width; x++) {
        const i = row + x;
        const u = buf[i];
        const dx = x === g.width - 1 ? 0 : buf[i + 1] - u;
        const dy = lastRow ? 0 : buf[i + g.pw] - u;
        const q = dx * dx + dy * dy;
        tv += Math.sqrt(q);
        e += q;
      }
    }
    return { tv, energy: 0.5 * e };
  }

  private recordFrame(cb: RunCallbacks): void {
    const fields: Record<string, FieldStats> = {};
    const views: Record<string, NdArray<FieldArray>> = {};
    const g = this.geometry;
    this.scheme.fields.forEach((f, k) => {
      const base = this.fieldStats(k);
      const data = cb.onFrame ? this.fieldData(k) : null;
      if (this.measures) {
        const extra: { drift: number; tv: number; energy: number; change?: { rms: number; max: number } } = {
          drift: base.mean - this.initialMeans[k], ...this.gradientMeasures(k),
        };
        if (f.updated && this.stepIndex > 0) extra.change = this.changeOf(k);
        fields[f.name] = { ...base, ...extra };
      } else fields[f.name] = base;
      if (cb.onFrame && data) views[f.name] = ndarray(data, [g.height, g.width]);
      // Sensitivity mode: each field's derivatives travel beside its values, as Float32 pictures for display.
      if (cb.onFrame && this.tangents) {
        for (let j = 0; j < this.tangents.wrt.length; j++) {
          views[sensitivityKey(f.name, this.tangents.wrt[j])] = ndarray(Float32Array.from(this.tangents.data(k, j)), [g.height, g.width]);
        }
      }
    });
    let extra: { psnr?: number; ssim?: number } = {};
    if (this.reference) {
      const ref = { width: g.width, height: g.height, data: Float64Array.from(this.reference.data) };
      const img = { width: g.width, height: g.height, data: this.fieldData(this.primary) };
      const p = psnrOf(ref, img);
      extra = { psnr: p };
      if (this.wantSsim && g.width >= 11 && g.height >= 11) extra.ssim = ssimOf(ref, img);
      if (!this.best || p > this.best.psnr) this.best = { step: this.stepIndex, psnr: p };
    }
    const stats: FrameStats = { step: this.stepIndex, t: this.t, fields, ...extra };
    this.frames.push(stats);
    cb.onFrame?.({ stats, fields: views });
  }

  private warn(kind: WarningKind, k: number, at: { x: number; y: number }, message: string): void {
    const field = this.scheme.fields[k].name;
    const update = this.scheme.updates.find(u => u.field === field);
    if (!update) return;
    this.warnings.push({ kind, step: this.stepIndex, x: at.x, y: at.y, field, message, range: update.range });
  }

  /** First interior pixel (row-major) satisfying `bad`; only called on a step that tripped a monitor. */
  private locate(k: number, bad: (v: number) => boolean): { x: number; y: number; v: number } {
    const g = this.geometry;
    const buf = this.ctx.cur[k];
    for (let y = 0; y < g.height; y++) {
      const o = (y + g.haloY) * g.pw + g.haloX;
      for (let x = 0; x < g.width; x++) if (bad(buf[o + x])) return { x, y, v: buf[o + x] };
    }
    return { x: -1, y: -1, v: NaN };
  }

  /** The interior pixel with the largest |value| (first in row-major order on ties). */
  private locateLargest(k: number): { x: number; y: number; v: number } {
    const g = this.geometry;
    const buf = this.ctx.cur[k];
    let best = { x: 0, y: 0, v: buf[g.haloY * g.pw + g.haloX] };
    for (let y = 0; y < g.height; y++) {
      const o = (y + g.haloY) * g.pw + g.haloX;
      for (let x = 0; x < g.width; x++) if (Math.abs(buf[o + x]) > Math.abs(best.v)) best = { x, y, v: buf[o + x] };
    }
    return best;
  }

  private checkMonitors(): void {
    const M = this.ctx.monitor;
    const where = (p: { x: number; y: number }) => (this.scheme.dims === 2 ? `pixel (${p.x}, ${p.y})` : `cell ${p.x}${this.geometry.height > 1 ? ` of row ${p.y}` : ''}`);
    for (const k of this.updated) {
      const name = this.scheme.fields[k].name;
      // Kernels report values before Float32 rounding: beyond FLT_MAX the stored value is ±Infinity.
      const overflow = this.dtype === 'float32' && Math.max(Math.abs(M.min[k]), Math.abs(M.max[k])) > FLOAT32_MAX;
      if (overflow || Number.isNaN(M.bad[k]) || !Number.isFinite(M.min[k]) || !Number.isFinite(M.max[k])) {
        const p = this.locate(k, v => !Number.isFinite(v));
        const what = Number.isNaN(p.v) ? 'NaN' : p.v > 0 ? '+Infinity' : '-Infinity';
        this.warn('blow-up', k, p, `${name} became ${what} at step ${this.stepIndex} (t = ${this.t}), ${where(p)}; the run stopped.`);
        this.status = 'blow-up';
        return;
      }
      const big = Math.max(Math.abs(M.min[k]), Math.abs(M.max[k]));
      if (big > this.growthBound && !this.warned.has(`growth:${k}`)) {
        this.warned.add(`growth:${k}`);
        const p = this.locateLargest(k);
        this.warn('growth', k, p, `|${name}| reached ${big.toPrecision(4)} at step ${this.stepIndex}, ${where(p)}, above the bound ${this.growthBound.toPrecision(4)}: the scheme is probably unstable.`);
      }
      const ex = this.extremum;
      if (ex && (M.max[k] > ex.hi || M.min[k] < ex.lo) && !this.warned.has(`extremum:${k}`)) {
        this.warned.add(`extremum:${k}`);
        const p = this.locate(k, v => v > ex.hi || v < ex.lo);
        // Kernels compare values before Float32 rounding; only warn when a stored value is really out of range.
        if (p.x >= 0) this.warn('new-extremum', k, p, `${name} = ${p.v.toPrecision(7)} at step ${this.stepIndex}, ${where(p)}, leaves the initial range [${ex.lo.toPrecision(7)}, ${ex.hi.toPrecision(7)}]: this scheme should keep the extrema, so dt is probably too large.`);
      }
    }
  }
}

export function createRun(scheme: CheckedScheme, opts: RunOptions = {}): Run {
  return new Run(scheme, opts);
}
