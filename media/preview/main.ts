// The live run's webview: builds the panel (input, verdict, picture with now/start/change views, scrubber, knobs,
// weights at a pixel, findings, charts, caution), draws the frames the host sends and posts user intents back.
// Rendering and controls only: every number shown arrives from the host; labels and mappings live in viewModel.ts.
// Imports only the shared protocol and sibling modules (never src/engine, analysis, notation or images).

import 'uplot/dist/uPlot.min.css';
import './preview.css';
import { validateToPreview, type FromPreview, type KnobSpec, type ToPreview, type WireFinding, type WireRange, type InputChoice, type NamedInputSpec, type SceneName, SCENE_NAMES } from '../../src/protocol/preview';
import { LineChart } from './charts';
import { divergingCss, divergingTable, labToRgb, luminance, NEGATIVE_END, POSITIVE_END, SEQUENTIAL_HIGH, SEQUENTIAL_LOW, sequentialTable } from './colour';
import { restoreState, type UiState } from './state';
import {
  changeScale, findingLine, findingText, fitText, fitTransform, fmt, FrameStore, framePixelAt, framePixelOf, fullPixel, greyWindow, keyAction, knobSpan, paint, paintRgb,
  panBy, seriesOf, seriesSummary, SLIDER_STEPS, sliderFromValue, spaceTimeRepeat, stepLabel, valueFromSlider, verdictLabel, weightRows, zoomAt, type ViewMode, type ViewTransform,
  betweenText, comparisonRows, influenceText, isotropySeries, measureSeriesOf, paintInfluence, paintSpectrum, spectrumText, thetaToScreen,
} from './viewModel';

// ------------------------------------------------------------------------------------------------ host link

const vscode = acquireVsCodeApi<UiState>();
const SOURCE = document.body.dataset.source ?? '';
const FILE_NAME = document.body.dataset.fileName ?? '';

type Intent = { [K in FromPreview.Type['type']]: Omit<Extract<FromPreview.Type, { type: K }>, 'source'> }[FromPreview.Type['type']];

/** The typed poster: stamps `source` on every intent. */
function post(msg: Intent): void {
  vscode.postMessage({ ...msg, source: SOURCE });
}

let state: UiState = restoreState(vscode.getState(), SOURCE);
function save(patch: Partial<UiState>): void {
  state = { ...state, ...patch };
  vscode.setState(state);
}

// ------------------------------------------------------------------------------------------------ DOM helpers

function h<K extends keyof HTMLElementTagNameMap>(tag: K, props: Record<string, string> = {}, ...children: (Node | string)[]): HTMLElementTagNameMap[K] {
  const el = document.createElement(tag);
  for (const [k, v] of Object.entries(props)) {
    if (k === 'text') el.textContent = v;
    else if (k === 'class') el.className = v;
    else el.setAttribute(k, v);
  }
  for (const c of children) el.append(c);
  return el;
}

function button(label: string, aria: string, onClick: () => void, cls = ''): HTMLButtonElement {
  const b = h('button', { type: 'button', 'aria-label': aria, title: aria, class: cls, text: label });
  b.addEventListener('click', onClick);
  return b;
}

// ------------------------------------------------------------------------------------------------ layout

const verdictEl = h('span', { class: 'verdict', role: 'status', 'aria-live': 'polite', text: 'checking…' });
const sceneSel = h('select', { id: 'input-scene', 'aria-label': 'input picture' });
const SCENE_TEXT: Record<SceneName, string> = { survey: 'survey tile', cells: 'cell slide', card: 'test card', palette: 'colour chart' };
for (const s of SCENE_NAMES) sceneSel.append(h('option', { value: s, text: SCENE_TEXT[s] }));
const fileOption = h('option', { value: 'file', text: 'image file' });
sceneSel.append(fileOption);
const noiseIn = h('input', { id: 'input-noise', type: 'number', min: '0', max: '1', step: '0.01', 'aria-label': 'noise level (Gaussian sigma)' });
const seedIn = h('input', { id: 'input-seed', type: 'number', min: '0', step: '1', 'aria-label': 'noise seed' });
const chooseBtn = button('choose image…', 'choose an image file to run on', () => post({ type: 'chooseImage' }));
// The sample range of an integer image file (value = (sample − lo) / (hi − lo)), e.g. 0 and 4095 for 12-bit data in 16-bit files.
const rangeLoIn = h('input', { id: 'input-range-lo', type: 'number', step: '1', placeholder: 'auto', 'aria-label': 'sample value that maps to 0 (empty: the format\'s own range)' });
const rangeHiIn = h('input', { id: 'input-range-hi', type: 'number', step: '1', placeholder: 'auto', 'aria-label': 'sample value that maps to 1 (empty: the format\'s own range)' });
const rangeEl = h('span', { class: 'range', hidden: '' }, h('label', { for: 'input-range-lo', text: 'range' }), rangeLoIn, h('span', { text: ':' }), rangeHiIn);
const header = h('header', { class: 'bar' },
  h('label', { for: 'input-scene', text: 'input' }), sceneSel,
  h('label', { for: 'input-noise', text: 'noise' }), noiseIn,
  h('label', { for: 'input-seed', text: 'seed' }), seedIn,
  chooseBtn, rangeEl,
  h('span', { class: 'spacer' }),
  verdictEl,
);

// The named inputs' choosers (`image "mask"`): shown only when the scheme reads named inputs.
const namedBar = h('div', { class: 'bar named-inputs', role: 'group', 'aria-label': 'named inputs', hidden: '' });
const problemsEl = h('div', { class: 'problems', role: 'alert', hidden: '' });
// What the scheme approximates (modified equation), one line under the verdict; details in its tooltip.
const approxEl = h('div', { class: 'approx', role: 'note', 'aria-live': 'polite', hidden: '' });
const noticeEl = h('div', { class: 'notice', role: 'status', hidden: '' });

const canvas = h('canvas', { class: 'picture', tabindex: '0', role: 'img', 'aria-label': 'the field at the current step' });
const readout = h('span', { class: 'readout', 'aria-live': 'off', text: 'hover the picture: x, y, value' });
const viewButtons = new Map<ViewMode, HTMLButtonElement>();
const viewBar = h('div', { class: 'views', role: 'group', 'aria-label': 'show' }, h('span', { text: 'show:' }));
for (const [mode, label, key] of [['now', 'now', 'n'], ['start', 'start', 's'], ['change', 'change', 'c'], ['influence', 'influence', 'i']] as const) {
  const b = button(label, `show ${label} (key ${key})`, () => setView(mode), 'toggle');
  b.setAttribute('aria-keyshortcuts', key);
  viewButtons.set(mode, b);
  viewBar.append(b);
}
viewBar.append(button('fit', 'fit the picture (key 0)', () => { fitView(); draw(); }));
// Colour schemes (image.red, .green, .blue): the three fields as one colour picture, instead of the shown field in grey.
let colourView = true;
const colourBtn = button('colour', 'show the red, green and blue fields as one colour picture', () => {
  colourView = !colourView;
  colourBtn.setAttribute('aria-pressed', String(colourView));
  draw();
}, 'toggle');
colourBtn.setAttribute('aria-pressed', 'true');
colourBtn.hidden = true;
viewBar.append(colourBtn);
// A/B: pins the shown step of this run as the baseline the next runs are compared with.
const pinBtn = button('pin this step', 'pin the shown step as the baseline for A/B comparison (kept across edits)', () => pinCurrent());
const legendSwatch = h('span', { class: 'swatch' });
const legendText = h('span');
const legendEl = h('div', { class: 'legend', 'aria-hidden': 'true' }, legendSwatch, legendText);
const stage = h('div', { class: 'stage' }, canvas);
const left = h('section', { class: 'left', 'aria-label': 'picture' }, viewBar, stage, h('div', { class: 'under' }, readout, legendEl));

const stepEl = h('div', { class: 'step-label', 'aria-live': 'off', text: 'no run yet' });
const scrub = h('input', { type: 'range', min: '0', max: '0', value: '0', step: '1', 'aria-label': 'step' });
const playBtn = button('▶ play', 'play or pause (key space)', () => togglePlay());
const scrubber = h('div', { class: 'scrubber' },
  stepEl,
  h('div', { class: 'row' },
    button('|◀', 'first step (key Home)', () => showIndex(0)),
    button('◀', 'previous recorded step (key ←)', () => showIndex(current - 1)),
    playBtn,
    button('▶', 'next recorded step (key →)', () => showIndex(current + 1)),
    button('▶|', 'last step (key End)', () => showIndex(store.last)),
  ),
  scrub,
  h('div', { class: 'row' }, pinBtn),
);
const fieldSel = h('select', { id: 'field', 'aria-label': 'field shown' });
const fieldRow = h('div', { class: 'row', hidden: '' }, h('label', { for: 'field', text: 'field' }), fieldSel);
// Derivative view: the host's engine worker computes ∂field/∂knob (sensitivity mode); this page only paints it.
const derivSel = h('select', { id: 'derivative', 'aria-label': 'values or derivative with respect to a knob' });
const derivRow = h('div', { class: 'row' }, h('label', { for: 'derivative', text: 'derivative' }), derivSel);
const knobsEl = h('div', { class: 'knobs' });
const writeBtn = button('write knobs into the file', 'write the knob values into the scheme file (one undoable edit)', () => post({ type: 'writeKnobs', values: knobValues, dt: knobDt }));
const resetBtn = button('file values', 'set the knobs back to the values in the file', () => resetKnobs());
// "fit knobs": the host searches the ranged knobs on the current scene and moves the knobs to what it finds.
const fitBtn = button('fit knobs', 'fitting needs a scene', () => post({ type: 'fitKnobs' }));
fitBtn.disabled = true;
const fitEl = h('p', { class: 'fit-status', role: 'status', 'aria-live': 'polite', hidden: '' });
const knobsSection = h('section', { class: 'card', 'aria-labelledby': 'knobs-h' }, h('h2', { id: 'knobs-h', text: 'knobs' }), knobsEl, h('div', { class: 'row' }, writeBtn, resetBtn, fitBtn), fitEl);
const weightsTitle = h('h2', { id: 'weights-h', text: 'weights' });
const weightsEl = h('div', { class: 'weights', text: 'click a pixel to see the weights it is updated with' });
const impulseEl = h('div', { class: 'impulse' });
const weightsSection = h('section', { class: 'card', 'aria-labelledby': 'weights-h' }, weightsTitle, weightsEl, impulseEl);
// The frequency map: |G(θ)| with the stable region's edge and a colour bar, drawn into one canvas; under it the
// isotropy error by direction (2-D) or |G| along θ (1-D).
const spectrumCanvas = h('canvas', { class: 'spectrum', role: 'img', 'aria-label': 'frequency map: not computed yet' });
const spectrumText_ = h('p', { class: 'spectrum-text', text: 'computed for each run' });
const chartIso = h('div', { class: 'chart' });
const chartAmp = h('div', { class: 'chart', hidden: '' });
const isoTitle = h('h3', { text: 'isotropy error by direction' });
const isoBox = h('figure', { class: 'chart-box', hidden: '' }, isoTitle, chartIso, chartAmp);
const spectrumSection = h('section', { class: 'card', 'aria-labelledby': 'spectrum-h' }, h('h2', { id: 'spectrum-h', text: 'frequency map |G(θ)|' }), spectrumCanvas, spectrumText_, isoBox);
const right = h('section', { class: 'right', 'aria-label': 'controls' }, scrubber, fieldRow, derivRow, knobsSection, weightsSection, spectrumSection);

// A/B: the pinned result, the current one and their difference side by side, with the metric deltas.
const abLabel = h('p', { class: 'ab-label' });
const abCanvases = (['pinned', 'now', 'now − pinned'] as const).map((name) => {
  const c = h('canvas', { class: 'ab-picture', role: 'img', 'aria-label': name });
  return { name, canvas: c, caption: h('figcaption', { text: name }) };
});
const abTable = h('table', { class: 'ab-table', 'aria-label': 'metrics of the pinned and the current result' });
const abBetween = h('p', { class: 'ab-between' });
const unpinBtn = button('unpin', 'forget the pinned result', () => post({ type: 'unpin' }));
const abSection = h('section', { class: 'card ab', 'aria-labelledby': 'ab-h', hidden: '' },
  h('div', { class: 'row' }, h('h2', { id: 'ab-h', text: 'A/B against the pinned result' }), h('span', { class: 'spacer' }), unpinBtn),
  abLabel,
  h('div', { class: 'ab-pictures' }, ...abCanvases.map((x) => h('figure', {}, x.canvas, x.caption))),
  abTable, abBetween,
);

const findingsEl = h('ul', { class: 'findings' });
const findingsSection = h('section', { class: 'card', 'aria-labelledby': 'findings-h' }, h('h2', { id: 'findings-h', text: 'findings' }), findingsEl);
const chartRange = h('div', { class: 'chart' });
const chartPsnr = h('div', { class: 'chart' });
const chartRow = h('div', { class: 'chart' });
const rangeTitle = h('h3', { text: 'range and mean' });
const psnrTitle = h('h3', { text: 'PSNR against clean' });
const rowTitle = h('h3', { text: 'row profile (pick a pixel)' });
const rangeSummary = h('p', { class: 'sr-only' });
const psnrBox = h('figure', { class: 'chart-box' }, psnrTitle, chartPsnr);
// Per-step measures (when the engine reports them): total variation, Dirichlet energy, change per step, mean drift.
const measureDefs = [['tv', 'total variation'], ['energy', 'Dirichlet energy'], ['change', 'change per step ‖uⁿ⁺¹ − uⁿ‖'], ['drift', 'mean drift (mean − initial mean)']] as const;
const measureBoxes = Object.fromEntries(measureDefs.map(([k, title]) => {
  const el = h('div', { class: 'chart' });
  return [k, { el, box: h('figure', { class: 'chart-box measure', hidden: '', 'data-measure': k }, h('h3', { text: title }), el) }];
})) as unknown as Record<(typeof measureDefs)[number][0], { el: HTMLElement; box: HTMLElement }>;
const charts = h('section', { class: 'charts', 'aria-label': 'charts' },
  h('figure', { class: 'chart-box' }, rangeTitle, chartRange, rangeSummary),
  psnrBox,
  h('figure', { class: 'chart-box' }, rowTitle, chartRow),
  ...measureDefs.map(([k]) => measureBoxes[k].box),
);
const footer = h('footer', { class: 'caution', text: 'Filtered images can lose or gain small structures. Not for diagnostic use.' });

const main = h('main', { class: 'grid' }, left, right);
document.body.append(header, namedBar, approxEl, problemsEl, noticeEl, main, abSection, findingsSection, charts, footer);
document.title = `Fluxel · ${FILE_NAME}`;

// ------------------------------------------------------------------------------------------------ run state

const store = new FrameStore();
let current = 0;
/** While true the picture follows the newest frame of a running run; scrubbing turns it off. */
let follow = true;
let playing = false;
let playTimer: number | null = null;
let transform: ViewTransform | null = state.zoom;
/** True while the picture is fitted to the stage (no zoom or pan of the user's): it refits when the stage resizes. */
let fitted = state.zoom === null;
let win = { lo: 0, hi: 1 };
let scheme: ToPreview.Scheme | null = null;
let knobValues: Record<string, number> = {};
let knobDt = 0;
/** The newest knob fit's message (older fits' messages are dropped). */
let fit: ToPreview.Fit | null = null;
let verdict: ToPreview.Verdict | null = null;
let weights: ToPreview.Weights | null = null;
let profile: ToPreview.Profile | null = null;
let spectrum: ToPreview.Spectrum | null = null;
let influence: ToPreview.Influence | null = null;
let approximates: ToPreview.Approximates | null = null;
let pinned: ToPreview.Baseline['pinned'] = null;
let comparison: ToPreview.Comparison | null = null;
const influenceOff = document.createElement('canvas');
const sequential = sequentialTable();
/** After a reload the page goes back to the remembered step once its frame arrives, instead of following. */
let restoreStep = state.step;
const off = document.createElement('canvas');
let diverging = divergingTable(isDark());

function isDark(): boolean {
  return document.body.classList.contains('vscode-dark') || document.body.classList.contains('vscode-high-contrast') && !document.body.classList.contains('vscode-high-contrast-light');
}

// ------------------------------------------------------------------------------------------------ picture

function setView(mode: ViewMode): void {
  save({ view: mode });
  document.body.dataset.view = mode;
  for (const [m, b] of viewButtons) b.setAttribute('aria-pressed', String(m === mode));
  if (mode === 'influence') requestInfluenceSoon();
  updateLegend();
  draw();
}

/** In the influence view, asks for the picked pixel's influence map at the shown step (once the step settles). */
let influenceTimer: number | null = null;
function requestInfluenceSoon(): void {
  if (state.view !== 'influence' || influenceTimer !== null) return;
  influenceTimer = window.setTimeout(() => {
    influenceTimer = null;
    const f = store.frames[current];
    const p = state.picked;
    if (!f || !p || state.view !== 'influence') return;
    if (influence && influence.runId === store.runId && influence.step === f.step && influence.x === p.x && influence.y === p.y) return;
    post({ type: 'requestInfluence', runId: store.runId, step: f.step, x: p.x, y: p.y });
  }, 120);
}

function updateLegend(): void {
  if (state.view === 'influence') {
    const m = influence && influence.runId === store.runId ? influence : null;
    const neg = labToRgb(NEGATIVE_END);
    const pos = labToRgb(POSITIVE_END);
    legendText.textContent = m ? `influence −${fmt(m.peak, 3)} … 0 … +${fmt(m.peak, 3)} over the input` : state.picked ? 'influence: computing…' : 'influence: click a pixel';
    legendSwatch.style.backgroundImage = `linear-gradient(to right, rgb(${neg.join(',')}), ${divergingCss(diverging, 0, 1)}, rgb(${pos.join(',')}))`;
    return;
  }
  if (state.view !== 'change') {
    legendText.textContent = `grey ${fmt(win.lo, 3)} … ${fmt(win.hi, 3)}`;
    legendSwatch.style.backgroundImage = 'linear-gradient(to right, #000, #fff)';
    return;
  }
  const f = store.frames[current];
  const s = f && store.frames[0] ? changeScale(f.data, store.frames[0].data) : 0;
  const neg = labToRgb(NEGATIVE_END);
  const pos = labToRgb(POSITIVE_END);
  legendText.textContent = `change −${fmt(s, 3)} … 0 … +${fmt(s, 3)}`;
  legendSwatch.style.backgroundImage = `linear-gradient(to right, rgb(${neg.join(',')}), ${divergingCss(diverging, 0, 1)}, rgb(${pos.join(',')}))`;
}

function canvasSize(): { w: number; hgt: number } {
  const r = stage.getBoundingClientRect();
  return { w: Math.max(64, Math.floor(r.width)), hgt: Math.max(64, Math.floor(r.height)) };
}

function fitView(): void {
  const s = store.started;
  if (!s) return;
  const { w, hgt } = canvasSize();
  transform = fitTransform(s.frameWidth, spaceTimeRows(), w, hgt);
  fitted = true;
  save({ zoom: null });
}

/** 1-D schemes draw a space–time picture: one band of `rowRepeat()` rows per recorded step. */
function stepRows(): number {
  const s = store.started;
  return s ? Math.ceil(s.steps / Math.max(1, s.every)) + 1 : 1;
}

function rowRepeat(): number {
  const s = store.started;
  if (!s || s.height !== 1) return 1;
  const { w, hgt } = canvasSize();
  return spaceTimeRepeat(w, hgt, s.frameWidth, stepRows());
}

function spaceTimeRows(): number {
  const s = store.started;
  if (!s) return 1;
  return s.height === 1 ? stepRows() * rowRepeat() : s.frameHeight;
}

function draw(): void {
  const s = store.started;
  const ctx = canvas.getContext('2d');
  if (!ctx) return;
  const { w, hgt } = canvasSize();
  const dpr = window.devicePixelRatio || 1;
  if (canvas.width !== Math.round(w * dpr) || canvas.height !== Math.round(hgt * dpr)) {
    canvas.width = Math.round(w * dpr);
    canvas.height = Math.round(hgt * dpr);
    canvas.style.width = `${w}px`;
    canvas.style.height = `${hgt}px`;
  }
  ctx.setTransform(dpr, 0, 0, dpr, 0, 0);
  ctx.clearRect(0, 0, w, hgt);
  const f = store.frames[current];
  const f0 = store.frames[0];
  if (!s || !f || !f0) return;
  const oneD = s.height === 1;
  const rep = rowRepeat();
  const fw = f.width;
  const fh = oneD ? (current + 1) * rep : f.height;
  if (!transform || fitted) fitView();
  const t = transform as ViewTransform;
  off.width = fw;
  off.height = oneD ? spaceTimeRows() : fh;
  const octx = off.getContext('2d');
  if (!octx) return;
  if (oneD) {
    // Bands 0..current of the space–time picture; each band is one recorded step, `rep` rows high.
    const img = octx.createImageData(fw, fh);
    // Derivative frames (f.wrt) are signed: diverging colours about zero, like the change view about the start.
    const base = f.wrt !== undefined ? new Float32Array(fw) : f0.data;
    // The influence view shows the input under the map.
    const mode = f.wrt !== undefined ? 'change' : state.view === 'influence' ? 'start' : state.view;
    const scale = mode === 'change' ? Math.max(1e-300, ...store.frames.slice(0, current + 1).map((fr) => changeScale(fr.data, base))) : 0;
    const row = new Uint8ClampedArray(fw * 4);
    for (let r = 0; r <= current; r++) {
      paint(row, mode, store.frames[r].data, base, win, diverging, scale);
      for (let k = 0; k < rep; k++) img.data.set(row, (r * rep + k) * fw * 4);
    }
    octx.putImageData(img, 0, 0);
  } else if (f.wrt !== undefined) {
    // A derivative image: signed, zero in the middle of the diverging colours, scaled to its own largest |value|.
    const img = octx.createImageData(fw, fh);
    const zero = new Float32Array(f.data.length);
    paint(img.data, 'change', f.data, zero, win, diverging, changeScale(f.data, zero));
    octx.putImageData(img, 0, 0);
  } else {
    const img = octx.createImageData(fw, fh);
    colourBtn.hidden = !f.colour;
    const rgb = state.view === 'start' || state.view === 'influence' ? f0.colour : f.colour;
    // The influence view shows the input (what the weights act on) under the map.
    if (colourView && rgb && state.view !== 'change') paintRgb(img.data, rgb.red, rgb.green, rgb.blue);
    else paint(img.data, state.view === 'influence' ? 'start' : state.view, f.data, f0.data, win, diverging, state.view === 'change' ? changeScale(f.data, f0.data) : 0);
    octx.putImageData(img, 0, 0);
  }
  ctx.imageSmoothingEnabled = false;
  ctx.drawImage(off, 0, 0, off.width, off.height, t.offsetX, t.offsetY, off.width * t.scale, off.height * t.scale);
  if (state.view === 'influence') drawInfluence(ctx, t, s, oneD ? rep : 0, fh);
  // The picked pixel: one accent ring, at least a few screen pixels wide.
  if (state.picked) {
    const p = framePixelOf(state.picked.x, state.picked.y, s);
    const py = oneD ? current * rep + (rep - 1) / 2 : p.fy;
    const size = Math.max(t.scale, 7);
    const cx = t.offsetX + (p.fx + 0.5) * t.scale;
    const cy = t.offsetY + (py + 0.5) * t.scale;
    ctx.lineWidth = 2;
    ctx.strokeStyle = getComputedStyle(document.body).getPropertyValue('--vscode-focusBorder').trim() || '#0a84ff';
    ctx.strokeRect(cx - size / 2 - 1, cy - size / 2 - 1, size + 2, size + 2);
    // Where the ring is, in CSS pixels of the canvas (for tests that read the picture around it after a re-layout).
    document.body.dataset.pickAt = `${cx.toFixed(1)},${cy.toFixed(1)}`;
  } else delete document.body.dataset.pickAt;
  canvas.setAttribute('aria-label', `${f.wrt !== undefined ? `derivative ∂${f.field}/∂${f.wrt}` : `${state.view} view of ${f.field}`}, ${stepLabel(f.step, s.steps, f.t)}; min ${fmt(f.stats.min)}, max ${fmt(f.stats.max)}, mean ${fmt(f.stats.mean)}`);
}

/**
 * The influence map over the picture: the input is dimmed, then each input pixel's weight is laid over it in the
 * diverging colours (opacity growing with |weight|), at full-resolution positions mapped to the frame's pixels.
 * 1-D schemes draw it over the first band (step 0, the input) of the space–time picture.
 */
function drawInfluence(ctx: CanvasRenderingContext2D, t: ViewTransform, s: ToPreview.RunStarted, band: number, drawnRows: number): void {
  const m = influence;
  const dim = getComputedStyle(document.body).getPropertyValue('--vscode-editor-background').trim() || '#1e1e1e';
  ctx.save();
  ctx.globalAlpha = 0.55;
  ctx.fillStyle = dim;
  ctx.fillRect(t.offsetX, t.offsetY, s.frameWidth * t.scale, drawnRows * t.scale);
  ctx.restore();
  if (!m || m.runId !== store.runId) return;
  influenceOff.width = m.width;
  influenceOff.height = m.height;
  const octx = influenceOff.getContext('2d');
  if (!octx) return;
  const img = octx.createImageData(m.width, m.height);
  paintInfluence(img.data, m.data, m.peak, diverging);
  octx.putImageData(img, 0, 0);
  // The frames' integer downsampling factor (as in framePixelOf).
  const k = Math.max(Math.ceil(s.width / s.frameWidth), s.height === 1 ? 1 : Math.ceil(s.height / s.frameHeight));
  const x = t.offsetX + (m.x0 / k) * t.scale;
  const y = t.offsetY + (band ? 0 : (m.y0 / k) * t.scale);
  const w = (m.width / k) * t.scale;
  const hh = band ? band * t.scale : (m.height / k) * t.scale;
  ctx.imageSmoothingEnabled = k > 1;
  ctx.drawImage(influenceOff, 0, 0, m.width, m.height, x, y, w, hh);
}

let dragging: { x: number; y: number; moved: boolean } | null = null;
canvas.addEventListener('wheel', (e) => {
  e.preventDefault();
  const s = store.started;
  if (!s || !transform) return;
  const r = canvas.getBoundingClientRect();
  const { w, hgt } = canvasSize();
  const fit = fitTransform(s.frameWidth, spaceTimeRows(), w, hgt);
  transform = zoomAt(transform, e.deltaY < 0 ? 1.25 : 0.8, e.clientX - r.left, e.clientY - r.top, Math.min(1, fit.scale));
  fitted = false;
  save({ zoom: transform });
  draw();
}, { passive: false });
canvas.addEventListener('pointerdown', (e) => {
  dragging = { x: e.clientX, y: e.clientY, moved: false };
  canvas.setPointerCapture(e.pointerId);
});
canvas.addEventListener('pointermove', (e) => {
  const r = canvas.getBoundingClientRect();
  if (dragging && transform) {
    const dx = e.clientX - dragging.x;
    const dy = e.clientY - dragging.y;
    if (dragging.moved || Math.abs(dx) + Math.abs(dy) > 3) {
      dragging.moved = true;
      transform = panBy(transform, dx, dy);
      fitted = false;
      dragging.x = e.clientX;
      dragging.y = e.clientY;
      draw();
    }
  }
  hover(e.clientX - r.left, e.clientY - r.top);
});
canvas.addEventListener('pointerup', (e) => {
  const d = dragging;
  dragging = null;
  if (d?.moved) {
    save({ zoom: transform });
    return;
  }
  const r = canvas.getBoundingClientRect();
  pick(e.clientX - r.left, e.clientY - r.top);
});
canvas.addEventListener('pointerleave', () => { readout.textContent = 'hover the picture: x, y, value'; });

function pixelUnder(sx: number, sy: number): { x: number; y: number; value: number; step: number } | null {
  const s = store.started;
  const f = store.frames[current];
  if (!s || !f || !transform) return null;
  const oneD = s.height === 1;
  const rep = rowRepeat();
  const p = framePixelAt(transform, sx, sy, f.width, oneD ? (current + 1) * rep : f.height);
  if (!p) return null;
  const frame = oneD ? store.frames[Math.floor(p.fy / rep)] : f;
  const full = fullPixel(p.fx, oneD ? 0 : p.fy, s);
  const base = store.frames[0];
  const v = frame.data[(oneD ? 0 : p.fy) * f.width + p.fx];
  const value = state.view === 'change' ? v - base.data[(oneD ? 0 : p.fy) * f.width + p.fx] : state.view === 'start' ? base.data[(oneD ? 0 : p.fy) * f.width + p.fx] : v;
  return { x: full.x, y: full.y, value, step: frame.step };
}

function hover(sx: number, sy: number): void {
  const p = pixelUnder(sx, sy);
  const s = store.started;
  if (!p || !s) {
    readout.textContent = '';
    return;
  }
  const approx = s.frameWidth < s.width ? '≈ ' : '';
  readout.textContent = `x ${p.x}, y ${p.y}${s.height === 1 ? `, step ${p.step}` : ''}: ${state.view === 'change' ? 'change ' : ''}${approx}${fmt(p.value, 5)}`;
}

function pick(sx: number, sy: number): void {
  const p = pixelUnder(sx, sy);
  if (!p) return;
  pickPixel(p.x, p.y, p.step);
}

function pickPixel(x: number, y: number, step: number): void {
  save({ picked: { x, y }, row: y });
  post({ type: 'pickPixel', runId: store.runId, step, x, y });
  post({ type: 'requestProfile', runId: store.runId, step, row: y });
  weightsTitle.textContent = `weights at (${x}, ${y}), step ${step}`;
  if (state.view === 'influence') {
    influence = null;
    post({ type: 'requestInfluence', runId: store.runId, step, x, y });
    updateLegend();
  }
  draw();
}

// ------------------------------------------------------------------------------------------------ scrubber

function showIndex(i: number, byUser = true): void {
  if (!store.frames.length) return;
  const k = Math.max(0, Math.min(store.last, i));
  if (byUser) follow = k === store.last && !store.ended ? true : false;
  current = k;
  scrub.value = String(k);
  const f = store.frames[k];
  const s = store.started;
  stepEl.textContent = s ? stepLabel(f.step, s.steps, f.t) : '';
  scrub.setAttribute('aria-valuetext', stepEl.textContent);
  save({ step: f.step });
  document.body.dataset.step = String(f.step);
  if (state.view === 'change') updateLegend();
  draw();
  scheduleCharts();
  if (state.row !== null && byUser) requestProfileSoon();
  if (byUser) {
    requestInfluenceSoon();
    requestComparisonSoon();
  }
  renderAB();
}

/** Asks for the A/B metrics of the shown step against the pinned result (once the step settles). */
let comparisonTimer: number | null = null;
function requestComparisonSoon(): void {
  if (!pinned || comparisonTimer !== null) return;
  comparisonTimer = window.setTimeout(() => {
    comparisonTimer = null;
    const f = store.frames[current];
    if (f && pinned) post({ type: 'requestComparison', runId: store.runId, step: f.step });
  }, 150);
}

function pinCurrent(): void {
  const f = store.frames[current];
  if (f) post({ type: 'pin', runId: store.runId, step: f.step });
}

let profileTimer: number | null = null;
function requestProfileSoon(): void {
  if (profileTimer !== null) return;
  profileTimer = window.setTimeout(() => {
    profileTimer = null;
    const f = store.frames[current];
    if (f && state.row !== null) post({ type: 'requestProfile', runId: store.runId, step: f.step, row: state.row });
  }, 60);
}

scrub.addEventListener('input', () => showIndex(Number(scrub.value)));

function togglePlay(): void {
  playing = !playing;
  playBtn.textContent = playing ? '⏸ pause' : '▶ play';
  playBtn.setAttribute('aria-pressed', String(playing));
  if (playTimer !== null) window.clearInterval(playTimer);
  playTimer = null;
  if (playing) {
    if (current >= store.last) showIndex(0);
    playTimer = window.setInterval(() => {
      if (current >= store.last) {
        if (store.ended) togglePlay();
        return;
      }
      showIndex(current + 1);
    }, 80);
  }
}

// ------------------------------------------------------------------------------------------------ knobs

function knobRow(spec: KnobSpec, value: number, limit: number | null, onChange: (v: number) => void): HTMLElement {
  const id = `knob-${spec.name}`;
  const slider = h('input', { id, type: 'range', min: '0', max: String(SLIDER_STEPS), step: '1', value: String(sliderFromValue(spec, value)) });
  const num = h('input', { type: 'number', step: 'any', value: String(value), 'aria-label': `${spec.name} value`, class: 'knob-num' });
  const span = knobSpan(spec);
  slider.setAttribute('aria-valuetext', fmt(value));
  const hint = h('span', { class: 'hint', text: `${fmt(span.lo)} … ${fmt(span.hi)}${limit !== null ? ` · limit ${fmt(limit)}` : ''}` });
  let pending: number | null = null;
  const send = (v: number) => {
    num.value = String(v);
    slider.setAttribute('aria-valuetext', fmt(v));
    if (pending !== null) window.clearTimeout(pending);
    pending = window.setTimeout(() => { pending = null; onChange(v); }, 40);
  };
  slider.addEventListener('input', () => send(valueFromSlider(spec, Number(slider.value))));
  num.addEventListener('change', () => {
    const v = Number(num.value);
    if (!Number.isFinite(v) || (spec.name === 'dt' && v <= 0)) return;
    slider.value = String(sliderFromValue(spec, v));
    send(v);
  });
  if (spec.name === 'dt') dtHint = { el: hint, span: `${fmt(span.lo)} … ${fmt(span.hi)}` };
  return h('div', { class: 'knob' }, h('label', { for: id, text: spec.name }), slider, num, hint);
}

/** The dt knob's range line; the limit in it follows the verdict without rebuilding the sliders (a drag goes on). */
let dtHint: { el: HTMLElement; span: string } | null = null;
function updateDtHint(): void {
  const limit = verdict?.verdict.limit ?? null;
  if (dtHint) dtHint.el.textContent = `${dtHint.span}${limit !== null ? ` · limit ${fmt(limit)}` : ''}`;
}

function renderKnobs(): void {
  knobsEl.replaceChildren();
  if (!scheme) return;
  for (const k of scheme.knobs) {
    knobsEl.append(knobRow(k, knobValues[k.name] ?? k.value, null, (v) => { knobValues = { ...knobValues, [k.name]: v }; sendKnobs(); }));
  }
  const limit = verdict?.verdict.limit ?? null;
  knobsEl.append(knobRow(scheme.dt, knobDt, limit, (v) => { knobDt = v; sendKnobs(); }));
}

function sendKnobs(): void {
  post({ type: 'setKnobs', values: knobValues, dt: knobDt });
}

function resetKnobs(): void {
  if (!scheme) return;
  knobValues = Object.fromEntries(scheme.knobs.map((k) => [k.name, k.value]));
  knobDt = scheme.dt.value;
  renderKnobs();
  sendKnobs();
}

// ------------------------------------------------------------------------------------------------ input

let currentInput: InputChoice | null = null;

function renderInput(input: InputChoice, label: string): void {
  currentInput = input;
  rangeEl.hidden = input.kind !== 'file';
  rangeLoIn.value = input.kind === 'file' && input.range ? String(input.range.lo) : '';
  rangeHiIn.value = input.kind === 'file' && input.range ? String(input.range.hi) : '';
  if (input.kind === 'scene') {
    sceneSel.value = input.scene;
    noiseIn.value = String(input.noise);
    seedIn.value = String(input.seed);
    fileOption.textContent = 'image file';
  } else {
    fileOption.textContent = `image: ${label}`;
    sceneSel.value = 'file';
  }
  noiseIn.disabled = input.kind !== 'scene';
  seedIn.disabled = input.kind !== 'scene';
}

function sendInput(): void {
  if (sceneSel.value === 'file') {
    post({ type: 'chooseImage' });
    return;
  }
  const noise = Math.max(0, Math.min(1, Number(noiseIn.value) || 0));
  const seed = Math.max(0, Math.min(4294967295, Math.floor(Number(seedIn.value) || 0)));
  post({ type: 'setInput', input: { kind: 'scene', scene: sceneSel.value as SceneName, noise, seed } });
}
/** Both ends given with lo < hi: the file is read with that range; both empty: the format's own range. */
function sendRange(): void {
  const input = currentInput;
  if (!input || input.kind !== 'file') return;
  const lo = rangeLoIn.value.trim(), hi = rangeHiIn.value.trim();
  if (lo === '' && hi === '') {
    post({ type: 'setInput', input: { kind: 'file', uri: input.uri } });
    return;
  }
  const l = Number(lo), u = Number(hi);
  const ok = lo !== '' && hi !== '' && Number.isFinite(l) && Number.isFinite(u) && u > l;
  rangeEl.classList.toggle('invalid', !ok);
  rangeEl.title = ok ? '' : 'give both ends, with the first below the second';
  if (ok) post({ type: 'setInput', input: { kind: 'file', uri: input.uri, range: { lo: l, hi: u } } });
}
rangeLoIn.addEventListener('change', sendRange);
rangeHiIn.addEventListener('change', sendRange);

// ------------------------------------------------------------------------------------------------ named inputs

/** One chooser per `image "NAME"` of the scheme: the generated mask (the default) or an image file. */
function renderNamedInputs(specs: readonly NamedInputSpec[]): void {
  namedBar.hidden = specs.length === 0;
  namedBar.replaceChildren(...specs.map((spec) => {
    const id = `named-${spec.name}`;
    const sel = h('select', { id, 'aria-label': `picture for the input "${spec.name}"` });
    sel.append(h('option', { value: 'mask', text: 'generated mask' }));
    sel.append(h('option', { value: 'file', text: spec.choice.kind === 'file' ? `image: ${spec.label}` : 'image file…' }));
    sel.value = spec.choice.kind;
    sel.addEventListener('change', () => {
      if (sel.value === 'file') post({ type: 'chooseNamedImage', name: spec.name });
      else post({ type: 'setNamedInput', name: spec.name, input: { kind: 'mask' } });
    });
    const again = button('choose…', `choose an image file for the input "${spec.name}"`, () => post({ type: 'chooseNamedImage', name: spec.name }));
    return h('span', { class: 'named-input' }, h('label', { for: id, text: `"${spec.name}"` }), sel, again);
  }));
}

sceneSel.addEventListener('change', sendInput);
noiseIn.addEventListener('change', sendInput);
seedIn.addEventListener('change', sendInput);
fieldSel.addEventListener('change', () => post({ type: 'showField', field: fieldSel.value }));
derivSel.addEventListener('change', () => post({ type: 'showDerivative', name: derivSel.value === '' ? null : derivSel.value }));

// ------------------------------------------------------------------------------------------------ findings and verdict

function reveal(range: WireRange): void {
  post({ type: 'reveal', range });
}

function renderVerdict(): void {
  if (!verdict) return;
  const v = verdictLabel(verdict.verdict);
  verdictEl.textContent = `● ${v.text}  ${v.detail}`;
  verdictEl.dataset.tone = v.tone;
  renderFindings();
}

function renderFindings(): void {
  findingsEl.replaceChildren();
  for (const f of store.findings) {
    const b = button(`▲ ${findingText(f)}  → ${findingLine(f)}`, `${findingText(f)}; go to step ${f.step}, mark the pixel and reveal ${findingLine(f)}`, () => openFinding(f), 'finding');
    b.dataset.kind = f.kind;
    findingsEl.append(h('li', { class: 'warn' }, b));
  }
  if (verdict) {
    const v = verdict.verdict;
    const label = verdictLabel(v);
    findingsEl.append(h('li', { class: label.tone === 'error' ? 'warn' : 'info', text: `i  ${label.text}: ${v.reason}` }));
  }
  if (approximates && approximates.runId === store.runId) {
    for (const w of approximates.warnings) {
      const r = w.range;
      findingsEl.append(h('li', { class: w.severity === 'warning' ? 'warn' : 'info' },
        r ? button(`${w.severity === 'warning' ? '▲' : 'i'}  ${w.message}  → line ${r.start.line}`, `${w.message}; reveal line ${r.start.line}`, () => reveal(r), 'finding') : w.message));
    }
  }
  if (store.ended && store.ended.status === 'failed' && store.ended.message) findingsEl.append(h('li', { class: 'warn', text: `the run failed: ${store.ended.message}` }));
  if (!findingsEl.childElementCount) findingsEl.append(h('li', { class: 'info', text: 'no findings' }));
}

function openFinding(f: WireFinding): void {
  const i = store.indexAtOrBefore(f.step);
  follow = false;
  showIndex(i, false);
  pickPixel(f.x, f.y, store.frames[i]?.step ?? f.step);
  reveal(f.range);
}

// ------------------------------------------------------------------------------------------------ weights

function renderWeights(w: ToPreview.Weights): void {
  weightsTitle.textContent = `weights at (${w.x}, ${w.y}), step ${w.step}`;
  const table = h('table', { class: 'wgrid', 'aria-label': `weights of ${w.field} at (${w.x}, ${w.y})` });
  for (const row of weightRows(w)) {
    const tr = h('tr');
    for (const c of row) {
      const td = h('td', { text: c.text, title: `offset (${c.dx}, ${c.dy}): ${c.weight}` });
      const rgb: [number, number, number] = [diverging[c.colour * 3], diverging[c.colour * 3 + 1], diverging[c.colour * 3 + 2]];
      td.style.backgroundColor = `rgb(${rgb.join(',')})`;
      td.style.color = luminance(rgb) > 0.25 ? '#000' : '#fff';
      if (c.centre) td.classList.add('centre');
      if (c.centre && w.negativeCentre) td.classList.add('negative');
      tr.append(td);
    }
    table.append(tr);
  }
  const facts = h('div', { class: 'facts' },
    h('span', { text: `sum ${fmt(w.sum, 4)}` }),
    h('span', { text: `centre ${fmt(w.centre, 4)}` }),
    h('span', { text: `new value ${fmt(w.value, 5)}` }),
  );
  if (w.negativeCentre) facts.append(h('strong', { class: 'neg', text: '▲ negative centre weight: this pixel is pushed away from its own value (over the limit here)' }));
  if (w.others) facts.append(h('span', { text: `and ${w.others} weights on other fields` }));
  weightsEl.replaceChildren(table, facts);
}

function renderImpulse(m: ToPreview.Impulse): void {
  const sig = m.sigma.map((s) => fmt(s, 4)).join(' × ');
  impulseEl.textContent = `impulse response after ${m.steps} steps (t = ${fmt(m.t)}): σ = ${sig} vs √(2t) = ${fmt(m.heatSigma, 4)}${m.truncated ? ' (clipped at the edge)' : ''}`;
}

// ------------------------------------------------------------------------------------------------ charts

// ------------------------------------------------------------------------------------------------ frequency map

const isoChart = new LineChart(chartIso, [{ label: 'error %', colourVar: '--vscode-charts-purple', fallback: '#8a63d2' }], 'direction (degrees)', 120, (v) => fmt(v, 3));
const ampChart = new LineChart(chartAmp, [{ label: '|G|', colourVar: '--vscode-charts-purple', fallback: '#8a63d2' }], 'θ');

function themeVar(name: string, fallback: string): string {
  return getComputedStyle(document.body).getPropertyValue(name).trim() || fallback;
}

/**
 * Draws the frequency map into its canvas: the |G| picture (θy up), the stable region's edge in the accent colour,
 * axis ticks at −π, 0, π, and a vertical colour bar with its range and the |G| = 1 mark.
 */
function renderSpectrum(): void {
  const m = spectrum;
  const ctx = spectrumCanvas.getContext('2d');
  if (!m || !ctx) return;
  const cssW = Math.max(180, Math.min(300, Math.floor(spectrumSection.clientWidth || 260)));
  const bar = 58;
  const mapW = cssW - bar;
  const mapH = m.dims === 2 ? mapW : 44;
  const pad = 14;
  const cssH = mapH + pad + 4;
  const dpr = window.devicePixelRatio || 1;
  spectrumCanvas.width = Math.round(cssW * dpr);
  spectrumCanvas.height = Math.round(cssH * dpr);
  spectrumCanvas.style.width = `${cssW}px`;
  spectrumCanvas.style.height = `${cssH}px`;
  ctx.setTransform(dpr, 0, 0, dpr, 0, 0);
  ctx.clearRect(0, 0, cssW, cssH);
  // The map.
  const off = document.createElement('canvas');
  off.width = m.cols;
  off.height = m.rows;
  const octx = off.getContext('2d');
  if (!octx) return;
  const img = octx.createImageData(m.cols, m.rows);
  paintSpectrum(img.data, m.amp, m.cols, m.rows, m.lo, m.hi, sequential);
  octx.putImageData(img, 0, 0);
  ctx.imageSmoothingEnabled = false;
  ctx.drawImage(off, 0, 0, m.cols, m.rows, 0, 0, mapW, mapH);
  // The stable region's edge (|G| = 1).
  const accent = themeVar('--vscode-focusBorder', '#0a84ff');
  ctx.strokeStyle = accent;
  ctx.lineWidth = 2;
  ctx.beginPath();
  for (let i = 0; i + 3 < m.edge.length; i += 4) {
    if (m.dims === 2) {
      ctx.moveTo(thetaToScreen(m.edge[i], m.cols, mapW), thetaToScreen(m.edge[i + 1], m.rows, mapH, true));
      ctx.lineTo(thetaToScreen(m.edge[i + 2], m.cols, mapW), thetaToScreen(m.edge[i + 3], m.rows, mapH, true));
    } else {
      const x = thetaToScreen(m.edge[i], m.cols, mapW);
      ctx.moveTo(x, 0);
      ctx.lineTo(x, mapH);
    }
  }
  ctx.stroke();
  // Axis ticks.
  const fg = themeVar('--vscode-foreground', '#888');
  ctx.fillStyle = fg;
  ctx.font = `10px ${themeVar('--vscode-font-family', 'sans-serif')}`;
  ctx.textBaseline = 'top';
  ctx.textAlign = 'left';
  ctx.fillText('−π', 0, mapH + 2);
  ctx.textAlign = 'center';
  ctx.fillText(m.dims === 2 ? '0   θx' : '0   θ', mapW / 2, mapH + 2);
  ctx.textAlign = 'right';
  ctx.fillText('π', mapW, mapH + 2);
  // The colour bar: lo at the bottom, hi at the top, the |G| = 1 mark where it falls inside.
  const bx = mapW + 8;
  const bw = 12;
  const table = sequential;
  for (let y = 0; y < mapH; y++) {
    const k = Math.round((1 - y / Math.max(1, mapH - 1)) * 255) * 3;
    ctx.fillStyle = `rgb(${table[k]}, ${table[k + 1]}, ${table[k + 2]})`;
    ctx.fillRect(bx, y, bw, 1);
  }
  ctx.strokeStyle = fg;
  ctx.lineWidth = 1;
  ctx.strokeRect(bx - 0.5, -0.5 + 0.5, bw + 1, mapH);
  ctx.fillStyle = fg;
  ctx.textAlign = 'left';
  ctx.textBaseline = 'top';
  ctx.fillText(fmt(m.hi, 3), bx + bw + 3, 0);
  ctx.textBaseline = 'bottom';
  ctx.fillText(fmt(m.lo, 3), bx + bw + 3, mapH);
  if (1 > m.lo && 1 < m.hi) {
    const y1 = (1 - (1 - m.lo) / (m.hi - m.lo)) * mapH;
    // The "1" label only where it does not run into the range labels at the ends.
    const labelled = y1 > 14 && y1 < mapH - 14;
    ctx.strokeStyle = accent;
    ctx.lineWidth = 2;
    ctx.beginPath();
    ctx.moveTo(bx - 3, y1);
    ctx.lineTo(bx + bw + 3, y1);
    ctx.stroke();
    ctx.textBaseline = 'middle';
    if (labelled) ctx.fillText('1', bx + bw + 3, y1);
  }
  spectrumCanvas.setAttribute('aria-label', `frequency map of |G| from ${fmt(m.lo, 3)} to ${fmt(m.hi, 3)}; ${spectrumText(m)}`);
  spectrumText_.textContent = `${spectrumText(m)}. ${m.note}`;
  // Under it: the isotropy error by direction (2-D) or |G| along θ (1-D).
  if (m.dims === 2 && m.isotropy) {
    const iso = isotropySeries(m.isotropy);
    isoBox.hidden = false;
    chartIso.hidden = false;
    chartAmp.hidden = true;
    isoTitle.textContent = `isotropy error by direction at |θ| = ${fmt(m.isotropy.radius, 3)} (%)`;
    isoChart.set(iso.degrees, [iso.percent]);
  } else if (m.dims === 1) {
    isoBox.hidden = false;
    chartIso.hidden = true;
    chartAmp.hidden = false;
    isoTitle.textContent = '|G| along θ';
    const xs = Array.from({ length: m.cols }, (_, i) => -Math.PI + (2 * Math.PI * i) / Math.max(1, m.cols - 1));
    ampChart.set(xs, [Array.from(m.amp)]);
  } else {
    isoBox.hidden = true;
  }
}

// ------------------------------------------------------------------------------------------------ A/B

/** Draws the pinned result, the shown frame and their difference into the three A/B canvases. */
function renderAB(): void {
  abSection.hidden = !pinned;
  pinBtn.textContent = pinned ? 'pin this step instead' : 'pin this step';
  if (!pinned) return;
  const p = pinned;
  abLabel.textContent = `pinned: ${p.label} · ${p.field} · ${p.pinnedAt.replace('T', ' ').slice(0, 19)} UTC`;
  const f = store.frames[current];
  const comparable = !!f && f.width === p.width && f.height === p.height && store.started?.width === p.fullWidth && store.started?.height === p.fullHeight;
  const box = Math.max(80, Math.floor((abSection.clientWidth || 600) / 3) - 16);
  const pictures: [HTMLCanvasElement, Float32Array | null, 'now' | 'change'][] = [
    [abCanvases[0].canvas, p.data, 'now'],
    [abCanvases[1].canvas, f ? f.data : null, 'now'],
    [abCanvases[2].canvas, comparable && f ? f.data : null, 'change'],
  ];
  const scale = comparable && f ? changeScale(f.data, p.data) : 0;
  for (const [c, data, mode] of pictures) {
    const w = c === abCanvases[0].canvas ? p.width : f?.width ?? 1;
    const hh = c === abCanvases[0].canvas ? p.height : f?.height ?? 1;
    const sc = Math.min(box / w, box / Math.max(1, hh), 8);
    c.width = Math.max(1, Math.round(w * sc));
    c.height = Math.max(1, Math.round(Math.max(1, hh) * sc * (hh === 1 ? 16 : 1)));
    const ctx = c.getContext('2d');
    if (!ctx) continue;
    ctx.clearRect(0, 0, c.width, c.height);
    if (!data) continue;
    const off2 = document.createElement('canvas');
    off2.width = w;
    off2.height = hh;
    const o = off2.getContext('2d');
    if (!o) continue;
    const img = o.createImageData(w, hh);
    paint(img.data, mode, data, p.data, win, diverging, scale);
    o.putImageData(img, 0, 0);
    ctx.imageSmoothingEnabled = false;
    ctx.drawImage(off2, 0, 0, w, hh, 0, 0, c.width, c.height);
  }
  abCanvases[1].caption.textContent = f ? `now (step ${f.step})` : 'now';
  abCanvases[2].caption.textContent = comparable ? `now − pinned (±${fmt(scale, 3)})` : 'now − pinned: sizes differ';
  const c = comparison && comparison.runId === store.runId ? comparison : null;
  abTable.replaceChildren(h('tr', {}, h('th', { text: '' }), h('th', { text: 'pinned' }), h('th', { text: c ? `now (step ${c.step})` : 'now' }), h('th', { text: 'Δ' })));
  const rows = c ? comparisonRows(c) : comparisonRows({ pinned: p.metrics, current: { psnr: null, ssim: null, tv: null }, delta: { psnr: null, ssim: null, tv: null } });
  for (const r of rows) {
    const d = h('td', { text: r.delta });
    if (r.better !== null) d.dataset.better = String(r.better);
    abTable.append(h('tr', {}, h('th', { text: r.metric }), h('td', { text: r.pinned }), h('td', { text: r.now }), d));
  }
  abBetween.textContent = c ? betweenText(c) : 'measuring…';
}

// ------------------------------------------------------------------------------------------------ modified equation

function renderApprox(): void {
  const a = approximates;
  if (!a || a.runId !== store.runId) return;
  approxEl.hidden = false;
  approxEl.textContent = a.text;
  // Two lines at most on the page; the whole summary and the details per field in the tooltip.
  approxEl.title = [a.text, ...a.details].join('\n');
  renderFindings();
}

const rangeChart = new LineChart(chartRange, [
  { label: 'min', colourVar: '--vscode-charts-blue', fallback: '#3b7ddd' },
  { label: 'max', colourVar: '--vscode-charts-red', fallback: '#d9534f' },
  { label: 'mean', colourVar: '--vscode-charts-foreground', fallback: '#888', dash: [4, 3] },
], 'step');
const psnrChart = new LineChart(chartPsnr, [{ label: 'PSNR dB', colourVar: '--vscode-charts-green', fallback: '#3c9d5d' }], 'step');
const rowChart = new LineChart(chartRow, [
  { label: 'start', colourVar: '--vscode-charts-foreground', fallback: '#888', dash: [3, 3], width: 1 },
  { label: 'now', colourVar: '--vscode-charts-orange', fallback: '#d98c1f' },
], 'x');

const axisNumber = (v: number) => fmt(v, 3);
const measureCharts = {
  tv: new LineChart(measureBoxes.tv.el, [{ label: 'TV', colourVar: '--vscode-charts-blue', fallback: '#3b7ddd' }], 'step', 120, axisNumber),
  energy: new LineChart(measureBoxes.energy.el, [{ label: 'energy', colourVar: '--vscode-charts-orange', fallback: '#d98c1f' }], 'step', 120, axisNumber),
  change: new LineChart(measureBoxes.change.el, [
    { label: 'RMS', colourVar: '--vscode-charts-green', fallback: '#3c9d5d' },
    { label: 'max', colourVar: '--vscode-charts-red', fallback: '#d9534f', dash: [4, 3] },
  ], 'step', 120, axisNumber),
  drift: new LineChart(measureBoxes.drift.el, [{ label: 'drift', colourVar: '--vscode-charts-purple', fallback: '#8a63d2' }], 'step', 120, axisNumber),
};
const allCharts = (): LineChart[] => [rangeChart, psnrChart, rowChart, isoChart, ampChart, ...Object.values(measureCharts)];

let chartsQueued = false;
function scheduleCharts(): void {
  if (chartsQueued) return;
  chartsQueued = true;
  requestAnimationFrame(() => {
    chartsQueued = false;
    renderCharts();
  });
}

function renderCharts(): void {
  const s = store.started;
  if (!s) return;
  const ser = seriesOf(store.frames, s.hasReference);
  const now = store.frames[current]?.step ?? 0;
  const cur = { x: now, colourVar: '--vscode-focusBorder', fallback: '#0a84ff' };
  rangeChart.set(ser.steps, [ser.min, ser.max, ser.mean], [cur]);
  rangeSummary.textContent = seriesSummary(ser);
  psnrBox.hidden = !ser.psnr;
  if (ser.psnr) {
    psnrTitle.textContent = ser.best ? `PSNR against clean · best at step ${ser.best.step} (${fmt(ser.best.psnr, 4)} dB)` : 'PSNR against clean';
    psnrChart.set(ser.steps, [ser.psnr], ser.best ? [cur, { x: ser.best.step, colourVar: '--vscode-charts-green', fallback: '#3c9d5d' }] : [cur]);
  }
  const ms = measureSeriesOf(store.frames);
  for (const k of Object.keys(measureBoxes) as (keyof typeof measureBoxes)[]) measureBoxes[k].box.hidden = !ms;
  if (ms) {
    measureCharts.tv.set(ms.steps, [ms.tv], [cur]);
    measureCharts.energy.set(ms.steps, [ms.energy], [cur]);
    measureCharts.change.set(ms.steps, [ms.changeRms, ms.changeMax], [cur]);
    measureCharts.drift.set(ms.steps, [ms.drift], [cur]);
  }
  if (profile && profile.runId === store.runId) {
    rowTitle.textContent = `row ${profile.row}: start and step ${profile.step}`;
    const xs = Array.from({ length: profile.before.length }, (_, i) => i);
    rowChart.set(xs, [Array.from(profile.before), Array.from(profile.after)]);
  }
}

// ------------------------------------------------------------------------------------------------ messages

/** Plain facts about what is shown, as data attributes (for people inspecting the page and for the editor tests). */
function mark(): void {
  const b = document.body.dataset;
  b.runId = String(store.runId);
  b.frames = String(store.frames.length);
  b.step = String(store.frames[current]?.step ?? -1);
  b.status = store.ended?.status ?? (store.started ? 'running' : 'idle');
  b.findings = String(store.findings.length);
  b.view = state.view;
  b.weights = weights ? `${weights.x},${weights.y},${weights.step}` : '';
  b.fit = fit ? fit.status : '';
  b.fitValues = fit?.values ? JSON.stringify(fit.values) : '';
  b.knobs = JSON.stringify(knobValues);
  b.derivative = store.frames[current]?.wrt ?? '';
  b.spectrum = spectrum && spectrum.runId === store.runId ? `${spectrum.cols}x${spectrum.rows}` : '';
  b.influence = influence && influence.runId === store.runId ? `${influence.x},${influence.y},${influence.step}` : '';
  b.pinned = pinned ? String(pinned.step) : '';
  b.comparison = comparison && comparison.runId === store.runId ? String(comparison.step) : '';
  b.approximates = approximates && approximates.runId === store.runId ? approximates.text : '';
  b.measures = String(store.frames.filter((x) => x.measures).length);
  // The shown frame's mean as sent by the host and as held by the page, and the first frame's (cheap checks that the
  // page draws what the host sent; computed once the run has ended).
  const f = store.frames[current];
  const f0 = store.frames[0];
  if (store.ended && f && f0) {
    const mean = (d: Float32Array) => d.reduce((a, v) => a + v, 0) / Math.max(1, d.length);
    b.check = `${fmt(f.stats.mean, 6)}|${fmt(mean(f.data), 6)}|${fmt(mean(f0.data), 6)}|${current}|${store.frames.map((x) => x.step).join(',')}`;
  }
}

function onMessage(msg: ToPreview.Type): void {
  if (msg.source !== SOURCE) return;
  handleMessage(msg);
  mark();
}

function handleMessage(msg: ToPreview.Type): void {
  switch (msg.type) {
    case 'scheme': {
      scheme = msg;
      knobValues = { ...msg.current.values };
      knobDt = msg.current.dt;
      // The host owns the knob values (and remembers them per file), so a reloaded page simply shows them.
      renderKnobs();
      renderInput(msg.input, msg.inputLabel);
      renderNamedInputs(msg.namedInputs ?? []);
      fitBtn.disabled = !msg.fit?.ready;
      fitBtn.title = msg.fit?.note ?? 'fitting is not available';
      fitBtn.setAttribute('aria-label', `fit knobs: ${fitBtn.title}`);
      fieldSel.replaceChildren(...msg.fields.map((f) => h('option', { value: f, text: f })));
      fieldRow.hidden = msg.fields.length < 2;
      derivSel.replaceChildren(h('option', { value: '', text: 'none (values)' }), ...[...msg.knobs.map((k) => k.name), 'dt'].map((n) => h('option', { value: n, text: `∂/∂${n}` })));
      derivSel.value = msg.derivative ?? '';
      document.title = `Fluxel · ${msg.fileName}`;
      return;
    }
    case 'runStarted': {
      const newRun = msg.runId !== store.runId;
      store.begin(msg);
      if (newRun) {
        follow = restoreStep < 0;
        weights = null;
      }
      fieldSel.value = msg.field;
      scrub.max = '0';
      if (state.view === 'change') updateLegend();
      return;
    }
    case 'frame': {
      const i = store.add(msg);
      if (i < 0) return;
      if (i === 0) {
        win = greyWindow(msg.data);
        updateLegend();
        if (!transform) fitView();
      }
      scrub.max = String(store.last);
      if (restoreStep >= 0 && msg.step === restoreStep) {
        restoreStep = -1;
        showIndex(i, false);
      } else if (follow) showIndex(i, false);
      else scheduleCharts();
      return;
    }
    case 'finding':
      if (store.addFinding(msg)) renderFindings();
      return;
    case 'runEnded':
      if (msg.runId !== store.runId) return;
      store.ended = msg;
      restoreStep = -1;
      if (msg.status === 'blow-up') verdictEl.dataset.tone = 'error';
      // The picked pixel keeps its weights and row current across reruns (knobs, edits, input); without a pick,
      // the profile shows the middle row.
      if (store.frames[current] && store.started) {
        const step = store.frames[current].step;
        if (state.picked && !weights) post({ type: 'pickPixel', runId: store.runId, step, x: state.picked.x, y: state.picked.y });
        post({ type: 'requestProfile', runId: store.runId, step, row: state.row ?? state.picked?.y ?? Math.floor(store.started.height / 2) });
      }
      if (msg.status === 'failed') showNotice(`The run failed: ${msg.message ?? 'unknown error'}`, 'error');
      requestComparisonSoon();
      requestInfluenceSoon();
      renderFindings();
      scheduleCharts();
      return;
    case 'verdict':
      if (msg.runId !== store.runId) return;
      verdict = msg;
      renderVerdict();
      updateDtHint();
      return;
    case 'problems':
      if (msg.first) {
        const first = msg.first;
        problemsEl.replaceChildren(
          h('span', { text: `${msg.count} error${msg.count === 1 ? '' : 's'} in the scheme; showing the last good run. ` }),
          button(`line ${first.range.start.line}: ${first.message}`, `reveal the first error, line ${first.range.start.line}`, () => reveal(first.range), 'link'),
        );
        problemsEl.hidden = false;
        document.body.classList.add('stale');
      } else {
        problemsEl.hidden = true;
        document.body.classList.remove('stale');
      }
      return;
    case 'weights':
      if (msg.runId !== store.runId) return;
      weights = msg;
      renderWeights(msg);
      return;
    case 'impulse':
      if (msg.runId !== store.runId) return;
      renderImpulse(msg);
      return;
    case 'profile':
      if (msg.runId !== store.runId) return;
      profile = msg;
      scheduleCharts();
      return;
    case 'notice':
      showNotice(msg.text, msg.level);
      return;
    case 'spectrum':
      if (msg.runId !== store.runId) return;
      spectrum = msg;
      renderSpectrum();
      return;
    case 'influence':
      if (msg.runId !== store.runId) return;
      influence = msg;
      readout.textContent = influenceText(msg);
      updateLegend();
      draw();
      return;
    case 'approximates':
      if (msg.runId !== store.runId) return;
      approximates = msg;
      renderApprox();
      return;
    case 'baseline':
      pinned = msg.pinned;
      comparison = null;
      renderAB();
      requestComparisonSoon();
      return;
    case 'comparison':
      if (msg.runId !== store.runId) return;
      comparison = msg;
      renderAB();
      return;
    case 'fit':
      if (fit && msg.fitId < fit.fitId) return;
      fit = msg;
      fitEl.hidden = false;
      fitEl.textContent = fitText(msg);
      fitEl.dataset.level = msg.status === 'failed' ? 'error' : 'info';
      return;
  }
}

function showNotice(text: string, level: 'info' | 'error'): void {
  noticeEl.textContent = text;
  noticeEl.dataset.level = level;
  noticeEl.hidden = false;
}

window.addEventListener('message', (e: MessageEvent) => {
  const msg = validateToPreview(e.data);
  if (msg) onMessage(msg);
});

document.addEventListener('keydown', (e) => {
  const t = e.target as HTMLElement | null;
  if (t && (t.tagName === 'INPUT' || t.tagName === 'SELECT' || t.tagName === 'TEXTAREA') || e.ctrlKey || e.metaKey || e.altKey) return;
  if (t && t.tagName === 'BUTTON' && (e.key === ' ' || e.key === 'Enter')) return;
  const a = keyAction(e.key);
  if (!a) return;
  e.preventDefault();
  switch (a.kind) {
    case 'view': setView(a.mode); break;
    case 'play': togglePlay(); break;
    case 'step': showIndex(current + a.by); break;
    case 'first': showIndex(0); break;
    case 'last': showIndex(store.last); break;
    case 'fit': fitView(); draw(); break;
    case 'zoom': {
      if (!transform) break;
      const { w, hgt } = canvasSize();
      transform = zoomAt(transform, a.factor, w / 2, hgt / 2, 0.05);
      fitted = false;
      save({ zoom: transform });
      draw();
      break;
    }
  }
});

new ResizeObserver(() => {
  if (fitted) fitView();
  draw();
  for (const c of allCharts()) c.resize();
  renderSpectrum();
  renderAB();
}).observe(stage);

// Theme changes swap the body class: recompute the change map's middle and the chart colours.
new MutationObserver(() => {
  diverging = divergingTable(isDark());
  updateLegend();
  draw();
  for (const c of allCharts()) c.refresh();
  renderSpectrum();
  renderAB();
  if (weights) renderWeights(weights);
}).observe(document.body, { attributes: true, attributeFilter: ['class'] });

setView(state.view);
renderFindings();
post({ type: 'ready' });
