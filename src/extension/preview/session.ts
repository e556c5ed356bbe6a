// One live run per scheme document, free of vscode: checks the text, starts engine runs (debounced edits, knob
// moves, input changes), cancels the old run, streams frames to an injected poster, keeps the full-resolution
// frames for the weights inspector, answers the webview's intents and runs knob fits through an injected fitter
// (off the host thread; a newer fit or dispose() cancels one in flight). The panel (previewPanel.ts) wires it to
// VS Code; the bench and the unit tests drive it directly. Must not import vscode or the DOM.

import type { FieldSnapshot, WorkerRunOptions } from '../../engine/worker/protocol';
import type { WorkerRunCallbacks, WorkerRunHandle } from '../../engine/worker/workerClient';
import type { FrameStats, RunWarning } from '../../engine/types';
import type { BackendChoice } from '../../engine/wasm/select';
import { canonicalScheme } from '../../engine/plan';
import { sensitivityKey } from '../../engine/sensitivity';
import { parse, parseAndCheck } from '../../notation';
import type { SourceRange } from '../../notation/ast';
import type { CheckedScheme } from '../../notation/scheme';
import type { FromPreview, InputChoice, KnobSpec, NamedInputChoice, NamedInputSpec, SampleRange, ToPreview, WireMeasures, WirePinned, WireRange } from '../../protocol/preview';
import { bindInputs, colourFields, InputBindingError, makeMask, namedInputs, pictureFromGrey, type InputPicture } from '../../images/inputs';
import type { AnalysisService } from './analysisClient';
import { SUPERSEDED, type KnobSet, type SideMetrics } from './analysisProtocol';
import { restorePinned, storePinned, type PinnedResult, type StoredPinned } from './baseline';
import { downsample, frameStride, knobEdits, rowOf, shrinkFactor, type OffsetEdit } from './frames';

/** The engine worker as the session uses it (EngineWorker, or a fake in tests). */
export interface EngineLike {
  start(input: { scheme: CheckedScheme } | { source: string }, options: WorkerRunOptions, cb?: WorkerRunCallbacks): WorkerRunHandle;
  terminate(): Promise<void>;
}

export interface GreyPicture {
  readonly width: number;
  readonly height: number;
  /** The grey picture (BT.709 luma of colour pictures). */
  readonly data: Float32Array;
  /** Colour pictures: their red, green, blue and alpha channels (`image.red` ...); absent for grey pictures. */
  readonly channels?: { readonly red: Float32Array; readonly green: Float32Array; readonly blue: Float32Array; readonly alpha: Float32Array };
}

/** A picture with its channels as images/inputs.ts binds them (grey pictures: the grey value in every colour channel). */
function inputPicture(p: GreyPicture): InputPicture {
  if (!p.channels) return pictureFromGrey(p);
  return { width: p.width, height: p.height, colour: true, channels: { ...p.channels, luma: p.data } };
}

/** The clean reference in the channel of the picture field (the first field reading the main input). */
function referenceChannel(scheme: CheckedScheme, ref: GreyPicture): GreyPicture {
  const f = scheme.fields.find((x) => x.init.kind === 'image' && x.init.input === null);
  const channel = f && f.init.kind === 'image' ? f.init.channel : null;
  if (!ref.channels || channel === null || channel === 'luma') return ref;
  return { width: ref.width, height: ref.height, data: ref.channels[channel] };
}

/** What a named input runs on until the user chooses: the generated mask (images/inputs.ts makeMask) at the run's size. */
export const DEFAULT_NAMED_INPUT: NamedInputChoice = { kind: 'mask' };

export interface SessionSettings {
  /** Milliseconds an edit waits for the next one before a run starts (0: run on every change). */
  readonly debounceMs: number;
  /** Longest side, in pixels, of the frames posted to the webview; larger grids are box-downsampled. */
  readonly maxPreviewSize: number;
  /** Size of generated scenes. */
  readonly sceneSize: number;
  /** The kernel backend of the runs (`fluxel.engine.backend`); absent means `auto`. */
  readonly backend?: BackendChoice;
}

export const DEFAULT_SETTINGS: SessionSettings = { debounceMs: 150, maxPreviewSize: 512, sceneSize: 256, backend: 'auto' };

/** A knob fit as the session hands it to its fitter: the text with the current knob values written in, the pictures. */
export interface FitJob {
  readonly source: string;
  readonly image: GreyPicture;
  readonly reference: GreyPicture;
  /** The picture of each image field (named inputs, channels), when the scheme reads more than the grey picture. */
  readonly fieldImages?: Readonly<Record<string, GreyPicture>>;
  readonly steps: number;
  readonly metric: 'psnr';
  /** The knobs to fit, each with its declared range and its current value (clamped into the range). */
  readonly free: readonly { readonly name: string; readonly lo: number; readonly hi: number; readonly value: number }[];
  readonly backend: BackendChoice;
}

export interface FitOutcome {
  readonly values: Readonly<Record<string, number>>;
  readonly step: number;
  readonly best: number;
  readonly noisy: number;
  readonly evaluations: number;
}

/** What the session needs from its surroundings; every member is injected so the session runs without VS Code. */
export interface SessionEnv {
  readonly source: string;
  readonly fileName: string;
  post(msg: ToPreview.Type): void;
  newEngine(): EngineLike;
  readonly analysis: AnalysisService;
  settings(): SessionSettings;
  readImage(uri: string, range?: SampleRange): Promise<GreyPicture>;
  /** The remembered named-input choices of this document (optional). */
  recallNamedInputs?(): unknown;
  rememberNamedInputs?(choices: Readonly<Record<string, NamedInputChoice>>): void;
  /** The remembered input choice of this document, or null. */
  recallInput(): InputChoice | null;
  rememberInput(input: InputChoice): void;
  /** The remembered knob values of this document (optional: the bench keeps none). */
  recallKnobs?(): unknown;
  rememberKnobs?(knobs: StoredKnobs): void;
  /** Optional editor actions (absent in the bench). */
  pickImage?(): Promise<string | null>;
  applyEdits?(edits: readonly OffsetEdit[], text: string): Promise<boolean>;
  reveal?(range: WireRange): void;
  log?(line: string): void;
  /**
   * Runs a knob fit off the host thread (src/tune's worker pool in the panel); rejects once `signal` aborts.
   * Absent (the bench), the "fit knobs" button stays disabled.
   */
  fit?(job: FitJob, signal: AbortSignal, onEvaluation: (count: number) => void): Promise<FitOutcome>;
  /** Offers to write fitted values into the file; resolves true when the user accepts. */
  offerWrite?(summary: string): Promise<boolean>;
  /** The pinned result (A/B) remembered for this document, in its stored form (see baseline.ts). */
  recallPinned?(): unknown;
  /** Remembers the pinned result (null: unpinned, or too large to keep across reloads). */
  rememberPinned?(stored: StoredPinned | null): void;
}

/**
 * Knob values the user moved, remembered per file with the file's own values at the time: after a reload a moved
 * knob comes back only while the file still declares the value it was moved from.
 */
export interface StoredKnobs {
  readonly values: Readonly<Record<string, number>>;
  readonly dt: number | null;
  readonly declared: Readonly<Record<string, number>>;
  readonly declaredDt: number;
}

function storedKnobs(v: unknown): StoredKnobs | null {
  if (typeof v !== 'object' || v === null) return null;
  const o = v as Record<string, unknown>;
  const rec = (x: unknown): Record<string, number> | null =>
    typeof x === 'object' && x !== null && Object.values(x).every((n) => typeof n === 'number' && Number.isFinite(n)) ? { ...(x as Record<string, number>) } : null;
  const values = rec(o.values);
  const declared = rec(o.declared);
  const dt = o.dt === null || (typeof o.dt === 'number' && o.dt > 0) ? (o.dt as number | null) : undefined;
  if (!values || !declared || dt === undefined || typeof o.declaredDt !== 'number') return null;
  return { values, dt, declared, declaredDt: o.declaredDt };
}

/** How many monitor decisions (by scheme meaning and knob values) a session remembers, least recent dropped first. */
export const MONITOR_MEMORY = 64;

/** A step longer than this is "long": cancelling then terminates the worker instead of waiting (contracts §5). */
export const LONG_STEP_MS = 40;
/** Before any step has come back, set-up (compiling, the first step) may take this long before a cancel terminates. */
export const LONG_FIRST_STEP_MS = 250;

export const DEFAULT_INPUT: InputChoice = { kind: 'scene', scene: 'survey', noise: 0.1, seed: 7 };

const SCENE_LABELS: Record<string, string> = { survey: 'survey tile', cells: 'cell slide', card: 'test card', palette: 'colour chart' };

export function inputLabel(input: InputChoice | NamedInputChoice): string {
  if (input.kind === 'scene') return `${SCENE_LABELS[input.scene]}, noise ${input.noise}, seed ${input.seed}`;
  if (input.kind === 'mask') return 'generated mask (default)';
  const tail = input.uri.split(/[\\/]/).pop() ?? input.uri;
  return decodeURIComponent(tail) + (input.range ? ` (range ${input.range.lo}:${input.range.hi})` : '');
}

/** Named-input choices as remembered (anything unreadable is dropped). */
function storedNamed(v: unknown): Record<string, NamedInputChoice> {
  const out: Record<string, NamedInputChoice> = {};
  if (typeof v !== 'object' || v === null) return out;
  for (const [k, c] of Object.entries(v as Record<string, unknown>)) {
    if (typeof c !== 'object' || c === null) continue;
    const o = c as Record<string, unknown>;
    if (o.kind === 'mask') out[k] = { kind: 'mask' };
    else if (o.kind === 'file' && typeof o.uri === 'string') {
      const r = o.range as Record<string, unknown> | undefined;
      const range = r && typeof r.lo === 'number' && typeof r.hi === 'number' && r.hi > r.lo ? { lo: r.lo, hi: r.hi } : undefined;
      out[k] = { kind: 'file', uri: o.uri, ...(range ? { range } : {}) };
    }
  }
  return out;
}

/** The per-step measures the engine reports with a field's statistics (when it measures them). */
interface MeasuredStats {
  readonly drift?: number;
  readonly tv?: number;
  readonly energy?: number;
  readonly change?: { readonly rms: number; readonly max: number };
}

/** The engine's per-step measures of one field as the wire carries them; null when the engine reported none. */
export function wireMeasures(st: MeasuredStats): WireMeasures | null {
  if (st.drift === undefined && st.tv === undefined && st.energy === undefined && st.change === undefined) return null;
  return { drift: st.drift ?? null, tv: st.tv ?? null, energy: st.energy ?? null, changeRms: st.change?.rms ?? null, changeMax: st.change?.max ?? null };
}

/** current − pinned per metric; null where either side has none. */
export function metricDelta(current: SideMetrics, pinned: SideMetrics): SideMetrics {
  const d = (a: number | null, b: number | null) => (a === null || b === null ? null : a - b);
  return { psnr: d(current.psnr, pinned.psnr), ssim: d(current.ssim, pinned.ssim), tv: d(current.tv, pinned.tv) };
}

export function wireRange(r: SourceRange): WireRange {
  return { start: { line: r.start.line, column: r.start.column }, end: { line: r.end.line, column: r.end.column } };
}

interface StoredFrame {
  readonly step: number;
  readonly t: number;
  readonly stats: FrameStats;
  readonly fields: Record<string, FieldSnapshot>;
}

interface LiveRun {
  readonly runId: number;
  readonly text: string;
  readonly scheme: CheckedScheme;
  readonly knobs: KnobSet;
  readonly started: ToPreview.RunStarted;
  readonly shrink: number;
  handle: WorkerRunHandle | null;
  engine: EngineLike | null;
  readonly frames: StoredFrame[];
  readonly findings: ToPreview.Finding[];
  ended: ToPreview.RunEnded | null;
  verdict: ToPreview.Verdict | null;
  impulse: ToPreview.Impulse | null;
  /** The clean reference the run's PSNR is measured against (scenes), or null. */
  readonly reference: GreyPicture | null;
  /** The input picture the run started from (fields `= image`), or null. */
  readonly image: GreyPicture | null;
  /** The pictures bound per field (named inputs, channels), or null. */
  readonly fieldImages: Record<string, GreyPicture> | null;
  spectrum: ToPreview.Spectrum | null;
  approximates: ToPreview.Approximates | null;
  /** The run's knob values and input in words, for the label of a pinned result. */
  readonly label: string;
  /** Milliseconds per step between recorded frames (NaN until two frames arrived). */
  stepMs: number;
  /** When the run was handed to the worker (NaN while it waits for the worker). */
  launchedAt: number;
}

export class PreviewSession {
  private text = '';
  private good: { text: string; scheme: CheckedScheme } | null = null;
  private declared = new Map<string, number>();
  private declaredDt = NaN;
  /** Knob values the user moved away from the file's values. */
  private overrides: Record<string, number> = {};
  private dtOverride: number | null = null;
  private input: InputChoice;
  private engine: EngineLike | null = null;
  /**
   * A second worker, started and warmed while a run with long steps goes on (prepareSpare): an edit that has to
   * terminate the busy worker then continues at once on a warm one instead of paying for a new thread's start-up.
   */
  private spare: EngineLike | null = null;
  /** The last cancel had to terminate a worker: the scheme's steps are long, so keep a spare ready from the next frame on. */
  private terminatedLast = false;
  private run: LiveRun | null = null;
  private nextRunId = 1;
  private timer: ReturnType<typeof setTimeout> | null = null;
  private lastRefresh = -Infinity;
  private shownField: string | null = null;
  private schemeMsg: ToPreview.Scheme | null = null;
  private problemsMsg: ToPreview.Problems | null = null;
  /** The input picture (and clean reference for scenes) of the last input used, keyed by inputKey(). */
  private pictures: { key: string; image: GreyPicture; reference: GreyPicture | null } | null = null;
  private fetching: string | null = null;
  /** Named inputs: the choice per name, and the picture of each name keyed by what made it. */
  private named: Record<string, NamedInputChoice>;
  private namedPictures = new Map<string, { key: string; picture: GreyPicture }>();
  private namedFetching = new Set<string>();
  /** The analysis' decision on the new-extremum monitor, by scheme meaning and knob values (comments do not count). */
  private extremumByKey = new Map<string, boolean>();
  /** The run occupying the current worker (until its `done` settles), and the newest launch waiting for it. */
  private busy: LiveRun | null = null;
  private waiting: (() => void) | null = null;
  private disposed = false;
  /** The knob fit in flight, if any: a new fit or dispose() aborts it. */
  private fitting: { readonly fitId: number; readonly abort: AbortController } | null = null;
  private nextFitId = 1;
  /** The knob (or dt) whose derivative image the panel shows; runs then carry that one tangent (sensitivity mode). */
  private derivative: string | null = null;

  /** Knob values remembered from an earlier session, applied at the first successful check. */
  private recalled: StoredKnobs | null;
  /** The pinned result of an A/B comparison; kept across edits, reruns, input changes and re-shown panels. */
  private pinned: PinnedResult | null;

  constructor(private readonly env: SessionEnv) {
    this.input = env.recallInput() ?? DEFAULT_INPUT;
    this.named = storedNamed(env.recallNamedInputs?.());
    this.recalled = storedKnobs(env.recallKnobs?.());
    this.pinned = restorePinned(env.recallPinned?.());
  }

  private rememberKnobs(): void {
    this.env.rememberKnobs?.({ values: { ...this.overrides }, dt: this.dtOverride, declared: Object.fromEntries(this.declared), declaredDt: this.declaredDt });
  }

  /** The document changed (or was opened): check it now or after the debounce window. */
  documentChanged(text: string): void {
    this.text = text;
    const wait = this.env.settings().debounceMs;
    const now = performance.now();
    // The first change after a quiet period runs at once; changes that follow within the window are folded.
    if (wait <= 0 || (this.timer === null && now - this.lastRefresh >= wait)) {
      this.clearTimer();
      this.refresh();
      return;
    }
    this.clearTimer();
    this.timer = setTimeout(() => {
      this.timer = null;
      this.refresh();
    }, wait);
  }

  private clearTimer(): void {
    if (this.timer !== null) clearTimeout(this.timer);
    this.timer = null;
  }

  /** Checks the latest text; on success posts the scheme and starts a run, on errors keeps the last good run. */
  refresh(): void {
    if (this.disposed) return;
    this.lastRefresh = performance.now();
    const text = this.text;
    const checked = parseAndCheck(text);
    const errors = checked.diagnostics.filter((d) => d.severity === 'error');
    if (!checked.scheme || errors.length) {
      const first = errors[0];
      this.problemsMsg = {
        type: 'problems', source: this.env.source, count: errors.length || 1,
        first: first ? { message: first.message, code: first.code, range: wireRange(first.range) } : { message: 'The scheme has errors.', code: 'error', range: { start: { line: 1, column: 1 }, end: { line: 1, column: 1 } } },
      };
      this.env.post(this.problemsMsg);
      return;
    }
    if (this.problemsMsg && this.problemsMsg.first) {
      this.problemsMsg = { type: 'problems', source: this.env.source, count: 0, first: null };
      this.env.post(this.problemsMsg);
    }
    const scheme = checked.scheme;
    // A knob the user moved follows the file again once the file's own value for it changes.
    for (const p of scheme.params) {
      if (this.declared.has(p.name) && this.declared.get(p.name) !== p.value) delete this.overrides[p.name];
    }
    if (!Number.isNaN(this.declaredDt) && this.declaredDt !== scheme.dt) this.dtOverride = null;
    this.declared = new Map(scheme.params.map((p) => [p.name, p.value]));
    this.declaredDt = scheme.dt;
    for (const k of Object.keys(this.overrides)) if (!this.declared.has(k)) delete this.overrides[k];
    if (this.recalled) {
      const r = this.recalled;
      this.recalled = null;
      for (const p of scheme.params) if (r.values[p.name] !== undefined && r.declared[p.name] === p.value) this.overrides[p.name] = r.values[p.name];
      if (r.dt !== null && r.declaredDt === scheme.dt) this.dtOverride = r.dt;
    }
    this.rememberKnobs();
    this.good = { text, scheme };
    // A derivative view of a knob the file no longer declares goes back to the values.
    if (this.derivative !== null && this.derivative !== 'dt' && !scheme.params.some((p) => p.name === this.derivative)) this.derivative = null;
    this.postScheme();
    this.startRun();
  }

  private knobs(): KnobSet {
    const scheme = this.good?.scheme;
    const values: Record<string, number> = {};
    for (const p of scheme?.params ?? []) values[p.name] = this.overrides[p.name] ?? p.value;
    return { values, dt: this.dtOverride ?? scheme?.dt ?? 0 };
  }

  private postScheme(): void {
    const g = this.good;
    if (!g) return;
    const s = g.scheme;
    const knobs: KnobSpec[] = s.params.map((p) => ({ name: p.name, value: p.value, lo: p.lo, hi: p.hi }));
    const fields = s.fields.filter((f) => f.updated).map((f) => f.name);
    if (!this.shownField || !fields.includes(this.shownField)) this.shownField = s.updates[0]?.field ?? fields[0] ?? s.fields[0]?.name ?? null;
    this.schemeMsg = {
      type: 'scheme', source: this.env.source, fileName: this.env.fileName, dims: s.dims, fields,
      knobs, dt: { name: 'dt', value: s.dt, lo: s.dtBounds?.lo ?? null, hi: s.dtBounds?.hi ?? null }, steps: s.steps,
      current: this.knobs(), input: this.input, inputLabel: inputLabel(this.input), fit: this.fitState(),
      namedInputs: this.namedSpecs(s), derivative: this.derivative,
    };
    this.env.post(this.schemeMsg);
  }

  /** The knobs a fit would search (declared range, not empty), optionally only those named. */
  private fitNames(names?: readonly string[]): { name: string; lo: number; hi: number; value: number }[] {
    const s = this.good?.scheme;
    if (!s) return [];
    const current = this.knobs();
    return s.params
      .filter((p) => p.lo !== null && p.hi !== null && p.lo < p.hi && (!names || names.includes(p.name)))
      .map((p) => ({ name: p.name, lo: p.lo as number, hi: p.hi as number, value: Math.min(p.hi as number, Math.max(p.lo as number, current.values[p.name] ?? p.value)) }));
  }

  /** Whether "fit knobs" can run on the current scheme and input, with the button's tooltip. */
  private fitState(): { ready: boolean; note: string } {
    const s = this.good?.scheme;
    if (!this.env.fit || !s) return { ready: false, note: 'Fitting is not available here.' };
    if (!s.fields.some((f) => f.init.kind === 'image')) return { ready: false, note: 'Fitting needs a field that starts from the image (field NAME = image).' };
    if (this.input.kind !== 'scene') return { ready: false, note: 'Fitting needs a scene as input: an image file has no clean reference to measure against.' };
    const free = this.fitNames();
    if (!free.length) return { ready: false, note: 'No knob declares a range to search (param NAME = VALUE in [LO, HI]).' };
    return { ready: true, note: `Search ${free.map((f) => f.name).join(', ')} within the declared ranges for the best PSNR against the clean scene, jointly with the best step.` };
  }

  private inputKey(input: InputChoice): string {
    return input.kind === 'scene' ? `scene/${input.scene}/${input.noise}/${input.seed}/${this.env.settings().sceneSize}` : `file/${input.uri}/${input.range ? `${input.range.lo}:${input.range.hi}` : ''}`;
  }

  private namedSpecs(s: CheckedScheme): NamedInputSpec[] {
    return namedInputs(s).map((name) => {
      const choice = this.named[name] ?? DEFAULT_NAMED_INPUT;
      return { name, choice, label: inputLabel(choice) };
    });
  }

  private namedKey(choice: NamedInputChoice, width: number, height: number): string {
    return choice.kind === 'mask' ? `mask/${width}x${height}` : `file/${choice.uri}/${choice.range ? `${choice.range.lo}:${choice.range.hi}` : ''}`;
  }

  /**
   * The pictures of the named inputs for a run of this size, or null while some are still being read (the run
   * starts again when they arrive). The generated mask is made here (a cheap loop); files are decoded off the host thread.
   */
  private namedInputPictures(s: CheckedScheme, width: number, height: number): Map<string, InputPicture> | null {
    const out = new Map<string, InputPicture>();
    let ready = true;
    for (const name of namedInputs(s)) {
      const choice = this.named[name] ?? DEFAULT_NAMED_INPUT;
      const key = this.namedKey(choice, width, height);
      const have = this.namedPictures.get(name);
      if (have?.key === key) {
        out.set(name, inputPicture(have.picture));
        continue;
      }
      if (choice.kind === 'mask') {
        const picture = makeMask(width, height);
        this.namedPictures.set(name, { key, picture });
        out.set(name, inputPicture(picture));
        continue;
      }
      ready = false;
      const fetchKey = `${name}|${key}`;
      if (this.namedFetching.has(fetchKey)) continue;
      this.namedFetching.add(fetchKey);
      this.env.readImage(choice.uri, choice.range).then(
        (picture) => {
          this.namedFetching.delete(fetchKey);
          this.namedPictures.set(name, { key, picture });
          if (!this.disposed) this.startRun();
        },
        (err: unknown) => {
          this.namedFetching.delete(fetchKey);
          this.env.post({ type: 'notice', source: this.env.source, level: 'error', text: `Cannot read ${inputLabel(choice)} for the input "${name}": ${err instanceof Error ? err.message : String(err)}; back to the generated mask.` });
          this.setNamedInput(name, DEFAULT_NAMED_INPUT);
        },
      );
    }
    return ready ? out : null;
  }

  setNamedInput(name: string, choice: NamedInputChoice): void {
    this.named = { ...this.named, [name]: choice };
    this.env.rememberNamedInputs?.(this.named);
    this.postScheme();
    this.startRun();
  }

  /** Makes the scene or reads the file off the host thread (the analysis thread), then runs if nothing newer started. */
  private fetchInput(input: InputChoice): void {
    const key = this.inputKey(input);
    if (this.fetching === key) return;
    this.fetching = key;
    const size = this.env.settings().sceneSize;
    const got = input.kind === 'scene'
      ? this.env.analysis.scene(input.scene, input.noise, input.seed, size).then((s) => ({ image: s.noisy as GreyPicture, reference: s.clean as GreyPicture | null }))
      : this.env.readImage(input.uri, input.range).then((image) => ({ image, reference: null }));
    got.then(
      (p) => {
        if (this.fetching === key) this.fetching = null;
        this.pictures = { key, ...p };
        if (!this.disposed && this.inputKey(this.input) === key) this.startRun();
      },
      (err: unknown) => {
        if (this.fetching === key) this.fetching = null;
        this.env.post({ type: 'notice', source: this.env.source, level: 'error', text: `Cannot read ${inputLabel(input)}: ${err instanceof Error ? err.message : String(err)}` });
        if (input.kind === 'file') this.setInput(DEFAULT_INPUT);
      },
    );
  }

  /** A run's worker call has settled: the worker is free for the launch that waits, if any. */
  private settled(run: LiveRun): void {
    if (this.busy !== run) return;
    this.busy = null;
    const next = this.waiting;
    this.waiting = null;
    next?.();
  }

  /**
   * Cancels the current run (the worker sees it within one step). When a step is long, or the first step has not
   * come back after LONG_FIRST_STEP_MS, the worker is terminated instead and the next run gets a new one.
   */
  private stopRun(): void {
    this.waiting = null;
    const r = this.run;
    if (!r || !r.handle || r.ended) return;
    r.handle.cancel();
    const waited = performance.now() - r.launchedAt;
    const long = Number.isFinite(r.stepMs) ? r.stepMs > LONG_STEP_MS : r.frames.length <= 1 && waited > LONG_FIRST_STEP_MS;
    if (long && r.engine) {
      const old = r.engine;
      if (this.engine === old) {
        this.engine = this.spare;
        this.spare = null;
      }
      this.terminatedLast = true;
      if (this.busy === r) this.busy = null;
      void old.terminate().catch(() => undefined);
    }
    r.handle = null;
  }

  private startRun(): void {
    const g = this.good;
    if (!g || this.disposed) return;
    this.stopRun();
    const runId = this.nextRunId++;
    const input = this.input;
    const knobs = this.knobs();
    const s = g.scheme;
    const needsImage = s.fields.some((f) => f.init.kind === 'image');
    if (needsImage && this.pictures?.key !== this.inputKey(input)) {
      // The picture is made or read first, off the host thread; the run starts when it arrives.
      this.fetchInput(input);
      return;
    }
    const readsMain = s.fields.some((f) => f.init.kind === 'image' && f.init.input === null);
    const image = needsImage && this.pictures ? this.pictures.image : null;
    const reference = needsImage && this.pictures?.reference ? referenceChannel(s, this.pictures.reference) : null;
    // Named inputs and channels: every image field gets its own picture (images/inputs.ts bindInputs).
    let fieldImages: Record<string, GreyPicture> | null = null;
    if (needsImage && image) {
      const named = this.namedInputPictures(s, image.width, image.height);
      if (!named) return;
      try {
        fieldImages = bindInputs(s, { main: readsMain ? inputPicture(image) : null, named });
      } catch (err) {
        if (!(err instanceof InputBindingError)) throw err;
        const where = err.range ? `line ${err.range.start.line}: ` : '';
        this.env.post({ type: 'notice', source: this.env.source, level: 'error', text: `${where}${err.message}` });
        return;
      }
    }
    const size = this.env.settings().sceneSize;
    const width = s.dims === 1 ? (image?.width ?? size) : image?.width ?? size;
    const height = s.dims === 1 ? 1 : image?.height ?? size;
    const steps = s.untilTime !== null && knobs.dt !== s.dt ? Math.round(s.untilTime / knobs.dt) : s.steps;
    const every = frameStride(steps, width * height, s.fields.length);
    const shrink = shrinkFactor(width, height, this.env.settings().maxPreviewSize);
    const field = this.shownField ?? s.fields[0].name;
    const started: ToPreview.RunStarted = {
      type: 'runStarted', source: this.env.source, runId, width, height,
      frameWidth: Math.ceil(width / shrink), frameHeight: Math.ceil(height / shrink), steps, every, dt: knobs.dt, field,
      hasReference: reference !== null && needsImage,
    };
    const knobWords = [...Object.entries(knobs.values).map(([k, v]) => `${k} = ${Number(v.toPrecision(4))}`), `dt = ${Number(knobs.dt.toPrecision(4))}`].join(', ');
    const run: LiveRun = {
      runId, text: g.text, scheme: s, knobs, started, shrink, handle: null, engine: null, frames: [], findings: [], ended: null,
      verdict: null, impulse: null, reference: needsImage ? reference : null, image: needsImage ? image : null, fieldImages, spectrum: null, approximates: null, label: needsImage ? `${knobWords} · ${inputLabel(input)}` : knobWords,
      stepMs: NaN, launchedAt: NaN,
    };
    this.run = run;
    this.env.post(started);

    const monitorKey = `${canonicalScheme(s)}|${JSON.stringify(knobs)}`;
    const known = this.extremumByKey.get(monitorKey);
    const options: WorkerRunOptions = {
      ...(needsImage && image ? { image, ...(fieldImages ? { fieldImages } : {}) } : { width, height }),
      ...(needsImage && reference ? { reference } : {}),
      params: knobs.values, dt: knobs.dt, every,
      monitors: { extremumCheck: known ?? 'auto' },
      backend: this.env.settings().backend ?? 'auto',
      // The derivative view: the worker's run carries one tangent (the JavaScript dual kernels), frames carry the image.
      ...(this.derivative ? { sensitivity: [this.derivative] } : {}),
    };
    const launch = () => {
      if (this.run !== run || this.disposed) return;
      if (!this.engine) this.engine = this.env.newEngine();
      const engine = this.engine;
      run.engine = engine;
      run.launchedAt = performance.now();
      this.busy = run;
      let lastFrameAt = NaN;
      let lastFrameStep = 0;
      try {
        run.handle = engine.start({ scheme: s }, options, {
          onFrame: (stats, fields) => {
            const now = performance.now();
            // Time per step from consecutive frames only: the first frame also pays for compiling and set-up.
            if (Number.isFinite(lastFrameAt) && stats.step > lastFrameStep) run.stepMs = (now - lastFrameAt) / (stats.step - lastFrameStep);
            lastFrameAt = now;
            lastFrameStep = stats.step;
            // Long steps: the next edit will terminate this worker, so have a warm one ready for it. After a
            // terminate the spare is made at the new run's first frame (not at once, where it would compete with it).
            if (Number.isFinite(run.stepMs) && run.stepMs <= LONG_STEP_MS) this.terminatedLast = false;
            if (this.run === run && (this.terminatedLast || run.stepMs > LONG_STEP_MS || now - run.launchedAt > LONG_FIRST_STEP_MS)) this.prepareSpare(s);
            const frame: StoredFrame = { step: stats.step, t: stats.t, stats, fields };
            run.frames.push(frame);
            if (this.run === run) this.postFrame(run, frame);
          },
          onWarning: (w) => {
            const msg = this.findingMsg(run, w);
            run.findings.push(msg);
            if (this.run === run) this.env.post(msg);
          },
        });
      } catch (err) {
        this.settled(run);
        this.endRun(run, 'failed', 0, null, err instanceof Error ? err.message : String(err));
        return;
      }
      run.handle.done.then(
        ({ result }) => {
          this.settled(run);
          this.endRun(run, result.status, result.stepsDone, result.best ?? null, null);
        },
        (err: unknown) => {
          this.settled(run);
          this.endRun(run, run.handle === null ? 'cancelled' : 'failed', run.frames.at(-1)?.step ?? 0, null, err instanceof Error ? err.message : String(err));
        },
      );
    };
    // One run at a time per worker: while a cancelled run finishes its step, only the newest start waits
    // (starts queued in the worker would each pay for set-up before seeing their own cancellation).
    if (this.busy && this.busy.engine === this.engine && this.engine) this.waiting = launch;
    else launch();
    // The static verdict and the impulse response come from the analysis thread, beside the run; what the stencil
    // approximates and its frequency map follow the verdict (so they never delay it), for runs still current.
    this.env.analysis.verdict(g.text, knobs).then(
      (v) => {
        // Bounded: a day of typing makes thousands of distinct schemes, and only recent ones come back.
        this.extremumByKey.delete(monitorKey);
        this.extremumByKey.set(monitorKey, v.extremumCheck);
        if (this.extremumByKey.size > MONITOR_MEMORY) this.extremumByKey.delete(this.extremumByKey.keys().next().value as string);
        run.verdict = { type: 'verdict', source: this.env.source, runId, verdict: v.verdict };
        if (this.run === run) this.env.post(run.verdict);
      },
      (err: unknown) => this.env.log?.(`verdict failed: ${String(err)}`),
    ).then(() => {
      if (this.run === run && !this.disposed) this.requestWhy(run);
    }).catch((err: unknown) => this.env.log?.(`see-why requests failed: ${String(err)}`));
    this.requestImpulse(run, steps);
  }

  /** The modified-equation summary and the frequency map of a run's scheme at its knob values. */
  private requestWhy(run: LiveRun): void {
    const { text, knobs, runId } = run;
    this.env.analysis.approximates(text, knobs).then(
      (a) => {
        // A summary frozen at a pixel the user picked meanwhile is the more specific one: it stays.
        if (run.approximates) return;
        run.approximates = { type: 'approximates', source: this.env.source, runId, ...a };
        if (this.run === run) this.env.post(run.approximates);
      },
      (err: unknown) => this.env.log?.(`modified equation failed: ${String(err)}`),
    );
    this.env.analysis.spectrum(text, knobs).then(
      (m) => {
        if (run.spectrum) return;
        run.spectrum = { type: 'spectrum', source: this.env.source, runId, ...m };
        if (this.run === run) this.env.post(run.spectrum);
      },
      (err: unknown) => this.env.log?.(`frequency map failed: ${String(err)}`),
    );
  }

  private requestImpulse(run: LiveRun, steps: number): void {
    this.env.analysis.impulse(run.text, run.knobs, Math.max(1, steps)).then(
      (r) => {
        if (!r) return;
        run.impulse = { type: 'impulse', source: this.env.source, runId: run.runId, ...r };
        if (this.run === run) this.env.post(run.impulse);
      },
      (err: unknown) => this.env.log?.(`impulse failed: ${String(err)}`),
    );
  }

  private endRun(run: LiveRun, status: ToPreview.RunEnded['status'], stepsDone: number, best: { step: number; psnr: number } | null, message: string | null): void {
    if (run.ended) return;
    run.ended = { type: 'runEnded', source: this.env.source, runId: run.runId, status, stepsDone, best, message };
    if (this.run === run) this.env.post(run.ended);
  }

  private findingMsg(run: LiveRun, w: RunWarning): ToPreview.Finding {
    return {
      type: 'finding', source: this.env.source, runId: run.runId,
      finding: { kind: w.kind, step: w.step, x: w.x, y: w.y, field: w.field, message: w.message, range: wireRange(w.range) },
    };
  }

  private postFrame(run: LiveRun, frame: StoredFrame): void {
    const name = this.shownField && frame.fields[this.shownField] ? this.shownField : run.started.field;
    const wrt = this.derivative && frame.fields[sensitivityKey(name, this.derivative)] ? this.derivative : null;
    if (wrt) {
      this.postDerivativeFrame(run, frame, name, wrt);
      return;
    }
    const snap = frame.fields[name];
    if (!snap) return;
    // At full size the stored Float32 snapshot is posted as it is (posting copies it); otherwise it is averaged down.
    const small = run.shrink === 1 && snap.data instanceof Float32Array ? { width: snap.width, height: snap.height, data: snap.data } : downsample(snap, run.shrink);
    const st = frame.stats.fields[name] ?? { min: NaN, max: NaN, mean: NaN };
    // A colour scheme (image.red, .green, .blue) also sends the three fields, shrunk alike, for the colour view.
    const cf = colourFields(run.scheme);
    const shrunk = (n: string): Float32Array | null => {
      const f = frame.fields[n];
      if (!f) return null;
      return run.shrink === 1 && f.data instanceof Float32Array ? f.data : downsample(f, run.shrink).data;
    };
    const rgb = cf ? [shrunk(cf.red), shrunk(cf.green), shrunk(cf.blue)] : null;
    const measures = wireMeasures(st);
    this.env.post({
      type: 'frame', source: this.env.source, runId: run.runId, field: name, step: frame.step, t: frame.t,
      width: small.width, height: small.height, data: small.data, stats: { min: st.min, max: st.max, mean: st.mean },
      psnr: typeof frame.stats.psnr === 'number' && name === run.started.field ? frame.stats.psnr : null,
      ...(measures ? { measures } : {}),
      ...(rgb && rgb[0] && rgb[1] && rgb[2] ? { colour: { red: rgb[0], green: rgb[1], blue: rgb[2] } } : {}),
    });
  }

  /** A frame of ∂name/∂wrt, computed in the engine worker; its stats are the derivative's own. */
  private postDerivativeFrame(run: LiveRun, frame: StoredFrame, name: string, wrt: string): void {
    const snap = frame.fields[sensitivityKey(name, wrt)];
    const small = run.shrink === 1 && snap.data instanceof Float32Array ? { width: snap.width, height: snap.height, data: snap.data } : downsample(snap, run.shrink);
    let min = Infinity, max = -Infinity, sum = 0;
    for (let i = 0; i < snap.data.length; i++) {
      const v = snap.data[i];
      if (v < min) min = v;
      if (v > max) max = v;
      sum += v;
    }
    this.env.post({
      type: 'frame', source: this.env.source, runId: run.runId, field: name, step: frame.step, t: frame.t,
      width: small.width, height: small.height, data: small.data, stats: { min, max, mean: sum / snap.data.length }, psnr: null, wrt,
    });
  }

  /** Posts everything of the current state again (a page that (re)loaded). */
  replay(): void {
    if (this.problemsMsg) this.env.post(this.problemsMsg);
    if (this.schemeMsg) this.env.post({ ...this.schemeMsg, current: this.knobs(), input: this.input, inputLabel: inputLabel(this.input) });
    const r = this.run;
    if (!r) return;
    this.env.post(r.started);
    for (const f of r.frames) this.postFrame(r, f);
    for (const f of r.findings) this.env.post(f);
    if (r.verdict) this.env.post(r.verdict);
    if (r.impulse) this.env.post(r.impulse);
    if (r.approximates) this.env.post(r.approximates);
    if (r.spectrum) this.env.post(r.spectrum);
    if (r.ended) this.env.post(r.ended);
    if (this.pinned) this.postPinned();
  }

  /**
   * Fits the ranged knobs on the current scene (noise and seed included) off the host thread, moves the knobs to
   * the values found (which reruns), and offers to write them into the file. A newer fit cancels this one.
   */
  private async fitKnobs(names?: readonly string[]): Promise<void> {
    const g = this.good;
    const fit = this.env.fit;
    const state = this.fitState();
    if (!g || !fit) return;
    this.fitting?.abort.abort();
    this.fitting = null;
    const fitId = this.nextFitId++;
    const base = { type: 'fit' as const, source: this.env.source, fitId, metric: 'psnr' as const, values: null, step: null, best: null, noisy: null };
    const free = this.fitNames(names);
    const input = this.input;
    if (!state.ready || !free.length || input.kind !== 'scene') {
      this.env.post({ ...base, status: 'failed', evaluations: 0, message: state.ready ? 'None of the named knobs declares a range.' : state.note });
      return;
    }
    const abort = new AbortController();
    const me = { fitId, abort };
    this.fitting = me;
    this.env.post({ ...base, status: 'running', evaluations: 0, message: null });
    const knobs = this.knobs();
    // The fit runs the scheme as the knobs stand: the other knobs' current values are written into its text.
    const edits = knobEdits(parse(g.text).program, knobs.values, knobs.dt);
    let source = g.text;
    for (const e of [...edits].sort((a, b) => b.start - a.start)) source = source.slice(0, e.start) + e.newText + source.slice(e.end);
    const s = g.scheme;
    const steps = s.untilTime !== null && knobs.dt !== s.dt ? Math.round(s.untilTime / knobs.dt) : s.steps;
    let evaluations = 0;
    try {
      const size = this.env.settings().sceneSize;
      const key = this.inputKey(input);
      const pictures = this.pictures?.key === key && this.pictures.reference
        ? { image: this.pictures.image, reference: this.pictures.reference }
        : await this.env.analysis.scene(input.scene, input.noise, input.seed, size).then((p) => ({ image: p.noisy as GreyPicture, reference: p.clean as GreyPicture }));
      if (abort.signal.aborted) throw new Error('cancelled');
      // Named inputs and channels, bound as for a run; a named file still being read makes the fit wait for nothing: it fails with a note.
      const named = this.namedInputPictures(s, pictures.image.width, pictures.image.height);
      if (!named) throw new Error('a named input is still being read; try again in a moment');
      const fieldImages = bindInputs(s, { main: inputPicture(pictures.image), named });
      const job: FitJob = {
        source, image: pictures.image, reference: referenceChannel(s, pictures.reference), fieldImages, steps, metric: 'psnr', free,
        backend: this.env.settings().backend ?? 'auto',
      };
      const r = await fit(job, abort.signal, (n) => {
        evaluations = n;
        if (this.fitting === me) this.env.post({ ...base, status: 'running', evaluations: n, message: null });
      });
      if (this.fitting !== me || this.disposed) return;
      this.fitting = null;
      this.env.post({ ...base, status: 'done', evaluations: r.evaluations, values: { ...r.values }, step: r.step, best: r.best, noisy: r.noisy, message: null });
      // The knobs move to the values found; the file's text is untouched until the user accepts the offer.
      const cur = this.good?.scheme;
      if (!cur) return;
      for (const p of cur.params) {
        const v = r.values[p.name];
        if (v === undefined) continue;
        if (v === p.value) delete this.overrides[p.name];
        else this.overrides[p.name] = v;
      }
      this.rememberKnobs();
      this.postScheme();
      this.startRun();
      await this.offerWriteBack(r);
    } catch (err) {
      if (this.fitting !== me) return;
      this.fitting = null;
      const cancelled = abort.signal.aborted;
      this.env.post({ ...base, status: cancelled ? 'cancelled' : 'failed', evaluations, message: cancelled ? null : err instanceof Error ? err.message : String(err) });
    }
  }

  /** Offers to write fitted values into the file, as one undoable edit on the text current when the user accepts. */
  private async offerWriteBack(r: FitOutcome): Promise<void> {
    const shown = Object.entries(r.values).map(([k, v]) => `${k} = ${Number(v.toPrecision(4))}`).join(', ');
    const summary = `Fit: ${shown}, best step ${r.step}, PSNR ${r.best.toFixed(2)} dB (noisy input ${r.noisy.toFixed(2)} dB).`;
    try {
      if (!this.env.offerWrite || !(await this.env.offerWrite(summary)) || this.disposed || !this.env.applyEdits) return;
      const text = this.text;
      const out = knobEdits(parse(text).program, r.values, null);
      if (out.length) await this.env.applyEdits(out, text);
    } catch (err) {
      this.env.log?.(`fit write-back failed: ${String(err)}`);
      this.env.post({ type: 'notice', source: this.env.source, level: 'error', text: `The fitted values could not be written: ${err instanceof Error ? err.message : String(err)}` });
    }
  }

  setInput(input: InputChoice): void {
    this.input = input;
    this.env.rememberInput(input);
    this.postScheme();
    this.startRun();
  }

  /** Handles one validated message from the webview. */
  async handle(msg: FromPreview.Type): Promise<void> {
    if (this.disposed) return;
    switch (msg.type) {
      case 'ready':
        this.replay();
        return;
      case 'rerun':
        this.startRun();
        return;
      case 'setKnobs': {
        const s = this.good?.scheme;
        if (!s) return;
        for (const p of s.params) {
          const v = msg.values[p.name];
          if (v === undefined) continue;
          if (v === p.value) delete this.overrides[p.name];
          else this.overrides[p.name] = v;
        }
        this.dtOverride = msg.dt === s.dt ? null : msg.dt;
        this.rememberKnobs();
        this.startRun();
        return;
      }
      case 'writeKnobs': {
        if (!this.env.applyEdits) return;
        const text = this.text;
        const edits = knobEdits(parse(text).program, msg.values, msg.dt);
        if (edits.length) await this.env.applyEdits(edits, text);
        return;
      }
      case 'setInput':
        this.setInput(msg.input);
        return;
      case 'chooseImage': {
        const uri = await this.env.pickImage?.();
        if (uri) this.setInput({ kind: 'file', uri });
        return;
      }
      case 'setNamedInput':
        if (this.good && namedInputs(this.good.scheme).includes(msg.name)) this.setNamedInput(msg.name, msg.input);
        return;
      case 'chooseNamedImage': {
        if (!this.good || !namedInputs(this.good.scheme).includes(msg.name)) return;
        const uri = await this.env.pickImage?.();
        if (uri) this.setNamedInput(msg.name, { kind: 'file', uri });
        return;
      }
      case 'showField': {
        const r = this.run;
        if (!r || !r.scheme.fields.some((f) => f.name === msg.field)) return;
        this.shownField = msg.field;
        this.env.post({ ...r.started, field: msg.field });
        for (const f of r.frames) this.postFrame(r, f);
        if (r.ended) this.env.post(r.ended);
        return;
      }
      case 'pickPixel':
        await this.pickPixel(msg);
        return;
      case 'requestProfile': {
        const r = this.run;
        if (!r || r.runId !== msg.runId) return;
        const at = r.frames.find((f) => f.step === msg.step);
        const first = r.frames[0];
        const name = this.shownField ?? r.started.field;
        if (!at || !first || !at.fields[name]) return;
        this.env.post({ type: 'profile', source: this.env.source, runId: r.runId, row: Math.min(msg.row, r.started.height - 1), step: msg.step, before: rowOf(first.fields[name], msg.row), after: rowOf(at.fields[name], msg.row) });
        return;
      }
      case 'reveal':
        this.env.reveal?.(msg.range);
        return;
      case 'fitKnobs':
        await this.fitKnobs(msg.names);
        return;
      case 'showDerivative': {
        const s = this.good?.scheme;
        if (!s || (msg.name !== null && msg.name !== 'dt' && !s.params.some((p) => p.name === msg.name))) return;
        if (msg.name === this.derivative) return;
        // Tangents start at step 0, so the run starts again with (or without) them.
        this.derivative = msg.name;
        this.postScheme();
        this.startRun();
        return;
      }
      case 'pin':
        await this.pin(msg.runId, msg.step);
        return;
      case 'unpin':
        this.pinned = null;
        this.env.rememberPinned?.(null);
        this.env.post({ type: 'baseline', source: this.env.source, pinned: null });
        return;
      case 'requestComparison':
        await this.compare(msg.runId, msg.step);
        return;
      case 'requestInfluence':
        await this.influence(msg);
        return;
    }
  }

  /**
   * The influence map of a pixel at a recorded step: the analysis thread replays the run from its input at full
   * resolution (the same knobs, the same picture) and sweeps the frozen weights backwards over those states.
   */
  private async influence(msg: FromPreview.RequestInfluence): Promise<void> {
    const r = this.run;
    if (!r || r.runId !== msg.runId || msg.x >= r.started.width || msg.y >= r.started.height) return;
    if (!r.frames.some((f) => f.step === msg.step)) return;
    const name = r.scheme.fields.some((f) => f.name === this.shownField && f.updated) ? (this.shownField as string) : r.started.field;
    if (msg.step === 0) {
      this.env.post({ type: 'notice', source: this.env.source, level: 'info', text: 'The influence map needs a step after the start: at step 0 each pixel is its own input.' });
      return;
    }
    try {
      const m = await this.env.analysis.influence({
        text: r.text, knobs: r.knobs, image: r.image, ...(r.fieldImages ? { fieldImages: r.fieldImages } : {}), width: r.started.width, height: r.started.height, steps: msg.step, x: msg.x, y: msg.y, field: name,
      });
      if (this.run !== r) return;
      this.env.post({ type: 'influence', source: this.env.source, runId: r.runId, step: msg.step, x: msg.x, y: msg.y, ...m });
    } catch (err) {
      if (err instanceof Error && err.message === SUPERSEDED) return;
      this.env.post({ type: 'notice', source: this.env.source, level: 'error', text: `The influence map of (${msg.x}, ${msg.y}) could not be computed: ${err instanceof Error ? err.message : String(err)}` });
    }
  }

  /** The field a request about the current run concerns: the shown one when the run has it, else the run's own. */
  private fieldOf(r: LiveRun): string {
    return this.shownField && r.scheme.fields.some((f) => f.name === this.shownField) ? this.shownField : r.started.field;
  }

  /**
   * Pins the shown field of run `runId` at `step` (its full-resolution state) as the baseline of an A/B comparison,
   * with its metrics against the run's clean reference; replaces an older pin and is remembered per file.
   */
  private async pin(runId: number, step: number): Promise<void> {
    const r = this.run;
    if (!r || r.runId !== runId) return;
    const frame = r.frames.find((f) => f.step === step);
    const name = this.fieldOf(r);
    const snap = frame?.fields[name];
    if (!frame || !snap) return;
    const data = Float32Array.from(snap.data);
    try {
      const c = await this.env.analysis.compare({ width: snap.width, height: snap.height, data }, r.reference, null);
      if (this.disposed) return;
      this.pinned = {
        label: `step ${step} · ${r.label}`, step, t: frame.t, field: name, width: snap.width, height: snap.height, data, metrics: c.metrics,
        pinnedAt: new Date().toISOString(),
      };
    } catch (err) {
      this.env.post({ type: 'notice', source: this.env.source, level: 'error', text: `The result could not be pinned: ${err instanceof Error ? err.message : String(err)}` });
      return;
    }
    const stored = storePinned(this.pinned);
    this.env.rememberPinned?.(stored);
    if (!stored) this.env.post({ type: 'notice', source: this.env.source, level: 'info', text: 'The pinned result is too large to be kept across reloads; it stays while the panel is open.' });
    this.postPinned();
  }

  /** Posts the pinned result at the preview size of its own grid. */
  private postPinned(): void {
    const p = this.pinned;
    if (!p) return;
    const small = downsample(p, shrinkFactor(p.width, p.height, this.env.settings().maxPreviewSize));
    const wire: WirePinned = {
      label: p.label, step: p.step, t: p.t, field: p.field, fullWidth: p.width, fullHeight: p.height, width: small.width, height: small.height,
      data: small.data, metrics: p.metrics, pinnedAt: p.pinnedAt,
    };
    this.env.post({ type: 'baseline', source: this.env.source, pinned: wire });
  }

  /** The pinned result against the current run's shown field at `step`: both sides' metrics and their distance. */
  private async compare(runId: number, step: number): Promise<void> {
    const r = this.run;
    const p = this.pinned;
    if (!r || r.runId !== runId || !p) return;
    const frame = r.frames.find((f) => f.step === step);
    const snap = frame?.fields[this.fieldOf(r)];
    if (!frame || !snap) return;
    const comparable = snap.width === p.width && snap.height === p.height;
    try {
      const c = await this.env.analysis.compare(snap, r.reference, comparable ? p : null);
      if (this.run !== r || this.pinned !== p) return;
      this.env.post({
        type: 'comparison', source: this.env.source, runId: r.runId, step, comparable,
        note: comparable ? null : `The pinned result is ${p.width}×${p.height}, this run ${snap.width}×${snap.height}: only side by side.`,
        pinned: p.metrics, current: c.metrics, delta: metricDelta(c.metrics, p.metrics), between: c.between,
      });
    } catch (err) {
      this.env.log?.(`comparison failed: ${String(err)}`);
    }
  }

  /** Weights at (x, y), step n, from the full-resolution state recorded at that step (contracts §5). */
  private async pickPixel(msg: FromPreview.PickPixel): Promise<void> {
    const r = this.run;
    if (!r || r.runId !== msg.runId) return;
    const frame = r.frames.find((f) => f.step === msg.step);
    if (!frame || msg.x >= r.started.width || msg.y >= r.started.height) return;
    const fields = r.scheme.fields.map((f) => frame.fields[f.name]?.data ?? new Float32Array(r.started.width * r.started.height));
    const name = this.shownField && r.scheme.fields.some((f) => f.name === this.shownField && f.updated) ? this.shownField : r.started.field;
    try {
      const w = await this.env.analysis.weights({
        text: r.text, knobs: r.knobs, fields: fields as Float32Array[], width: r.started.width, height: r.started.height, t: frame.t, x: msg.x, y: msg.y, field: name,
      });
      if (this.run !== r) return;
      this.env.post({ type: 'weights', source: this.env.source, runId: r.runId, step: msg.step, x: msg.x, y: msg.y, ...w });
    } catch (err) {
      this.env.post({ type: 'notice', source: this.env.source, level: 'error', text: `Weights at (${msg.x}, ${msg.y}) could not be computed: ${err instanceof Error ? err.message : String(err)}` });
    }
    if (msg.step > 0) this.requestImpulse(r, msg.step);
    // What the scheme approximates with its coefficients frozen at the picked pixel of this step's state (for
    // linear schemes the same as before; for others it follows the pixel).
    const at = { fields: fields as Float32Array[], width: r.started.width, height: r.started.height, t: frame.t, step: msg.step, x: msg.x, y: msg.y };
    this.env.analysis.approximates(r.text, r.knobs, at).then(
      (a) => {
        if (this.run !== r) return;
        r.approximates = { type: 'approximates', source: this.env.source, runId: r.runId, ...a };
        this.env.post(r.approximates);
      },
      (err: unknown) => this.env.log?.(`modified equation at (${msg.x}, ${msg.y}) failed: ${String(err)}`),
    );
    // Likewise the frequency map, for schemes whose weights depend on the state (a linear scheme's map does not change).
    if (r.spectrum && r.spectrum.note.includes('exact for this linear scheme')) return;
    this.env.analysis.spectrum(r.text, r.knobs, at).then(
      (m) => {
        if (this.run !== r) return;
        r.spectrum = { type: 'spectrum', source: this.env.source, runId: r.runId, ...m };
        this.env.post(r.spectrum);
      },
      (err: unknown) => this.env.log?.(`frequency map at (${msg.x}, ${msg.y}) failed: ${String(err)}`),
    );
  }

  /** The id of the run whose frames are current (for tests and the bench). */
  get currentRunId(): number | null {
    return this.run?.runId ?? null;
  }

  /**
   * Starts the spare worker and runs the scheme once on a 16-pixel flat picture for two steps, so the thread, its
   * modules and the kernels' code paths are warm when it takes over.
   */
  private prepareSpare(s: CheckedScheme): void {
    if (this.spare || this.disposed) return;
    const spare = this.env.newEngine();
    this.spare = spare;
    const width = 16, height = s.dims === 1 ? 1 : 16;
    const flat = { width, height, data: new Float32Array(width * height).fill(0.5) };
    const images = s.fields.filter((f) => f.init.kind === 'image');
    const options: WorkerRunOptions = {
      ...(images.length ? { image: flat, fieldImages: Object.fromEntries(images.map((f) => [f.name, flat])) } : { width, height }),
      // No monitor analysis here: it would keep the spare busy for longer than the warm-up is worth (a run decides
      // its monitors after posting its start frame anyway).
      steps: 2, every: 0, monitors: { extremumCheck: false }, backend: this.env.settings().backend ?? 'auto',
    };
    try {
      spare.start({ scheme: s }, options).done.catch(() => undefined);
    } catch {
      // A warm-up that cannot start leaves a cold spare, which is still a started thread.
    }
  }

  get currentInput(): InputChoice {
    return this.input;
  }

  dispose(): void {
    this.disposed = true;
    this.fitting?.abort.abort();
    this.fitting = null;
    this.clearTimer();
    this.stopRun();
    this.busy = null;
    const e = this.engine;
    this.engine = null;
    if (e) void e.terminate().catch(() => undefined);
    const spare = this.spare;
    this.spare = null;
    if (spare) void spare.terminate().catch(() => undefined);
  }
}
