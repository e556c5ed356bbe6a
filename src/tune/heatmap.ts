// The sweep heat map, drawn by our own small renderer into an RGB pixel buffer: cells coloured by the metric,
// tick labels, axis labels, a title, a colour bar and a ring on the best cell; plus an RGB PNG encoder.
// Pure drawing (font.ts, colour.ts); the encoder uses pngjs. Must not import the engine, Node's fs, vscode or the DOM.
//
// Why our own renderer rather than a plotting library: the picture is one grid of cells with text, which is a few
// hundred lines here, while the well-kept JavaScript plotting libraries need a DOM or a native canvas module
// (and native node modules are ruled out for this project). src/images' encoder writes grey only, so colour
// PNGs go through pngjs (already a dependency) directly.

import { PNG } from 'pngjs';
import { colourAt, type Rgb } from './colour';
import { createCanvas, drawText, fillRect, setPixel, textWidth, GLYPH_H, type Canvas } from './font';

export interface HeatmapSpec {
  readonly title: string;
  readonly xLabel: string;
  readonly yLabel: string;
  readonly barLabel: string;
  /** Coordinate of each column (left to right) and each row (bottom to top), for the tick labels. */
  readonly xValues: readonly number[];
  readonly yValues: readonly number[];
  /** cells[row * xValues.length + col]; NaN draws as "no value" (e.g. a run that blew up). */
  readonly cells: ArrayLike<number>;
  /** A ring around this cell (the best setting). */
  readonly mark?: { readonly col: number; readonly row: number };
  /** One line of small print under the x label. */
  readonly note?: string;
  /** Cells drawn in ink instead of their colour where this is non-zero (e.g. the |G| = 1 edge of a frequency map). */
  readonly outline?: ArrayLike<number>;
  /** The colour bar's range instead of the cells' own minimum and maximum. */
  readonly range?: { readonly lo: number; readonly hi: number };
}

const INK: Rgb = [30, 30, 30];
const FAINT: Rgb = [110, 110, 110];
const NO_VALUE: Rgb = [200, 200, 200];
const S = 2; // text scale: 10×14-pixel glyphs

/** Tick text: whole numbers as they are, others with three significant digits. */
export function formatTick(v: number): string {
  if (!Number.isFinite(v)) return String(v);
  if (Number.isInteger(v)) return String(v);
  return Number(v.toPrecision(3)).toString();
}

/** Every k-th index with k the smallest of 1, 2, 5, 10, 20, 25, 50, ... giving at most `most` ticks. */
export function tickIndices(count: number, most = 8): number[] {
  const nice = [1, 2, 5];
  let k = 1;
  for (let scale = 1; ; scale *= 10) {
    const hit = [...nice, 2.5].map((m) => m * scale).filter((m) => Number.isInteger(m)).sort((a, b) => a - b).find((m) => Math.ceil(count / m) <= most);
    if (hit !== undefined) {
      k = hit;
      break;
    }
  }
  const out: number[] = [];
  for (let i = 0; i < count; i += k) out.push(i);
  return out;
}

/** Finite minimum and maximum of the cells; [0, 1] when none is finite. */
function finiteRange(cells: ArrayLike<number>): [number, number] {
  let lo = Infinity, hi = -Infinity;
  for (let i = 0; i < cells.length; i++) {
    const v = cells[i];
    if (Number.isFinite(v)) {
      if (v < lo) lo = v;
      if (v > hi) hi = v;
    }
  }
  return lo <= hi ? [lo, hi] : [0, 1];
}

export function renderHeatmap(spec: HeatmapSpec): Canvas {
  const cols = spec.xValues.length, rows = spec.yValues.length;
  if (cols < 1 || rows < 1 || spec.cells.length !== cols * rows) {
    throw new Error(`heat map needs ${cols}×${rows} = ${cols * rows} cells, got ${spec.cells.length}`);
  }
  const plotW = 600, plotH = 380;
  const left = 150, top = 64, right = 190, bottom = 110;
  const width = left + plotW + right, height = top + plotH + bottom;
  const c = createCanvas(width, height);
  const [lo, hi] = spec.range ? [spec.range.lo, spec.range.hi] : finiteRange(spec.cells);
  const tOf = (v: number) => (Number.isNaN(v) ? Number.NaN : hi > lo ? (v - lo) / (hi - lo) : 0.5);

  // Cells: each plot pixel takes the cell under it, so any grid size fills the same area.
  for (let py = 0; py < plotH; py++) {
    const row = rows - 1 - Math.floor((py * rows) / plotH);
    for (let px = 0; px < plotW; px++) {
      const col = Math.floor((px * cols) / plotW);
      const v = spec.cells[row * cols + col];
      setPixel(c, left + px, top + py, spec.outline?.[row * cols + col] ? INK : colourAt(tOf(v)) ?? NO_VALUE);
    }
  }
  // Frame.
  fillRect(c, left - 1, top - 1, plotW + 2, 1, INK);
  fillRect(c, left - 1, top + plotH, plotW + 2, 1, INK);
  fillRect(c, left - 1, top - 1, 1, plotH + 2, INK);
  fillRect(c, left + plotW, top - 1, 1, plotH + 2, INK);

  const colCentre = (i: number) => left + Math.floor(((i + 0.5) * plotW) / cols);
  const rowCentre = (j: number) => top + plotH - 1 - Math.floor(((j + 0.5) * plotH) / rows);

  // Ring around the best cell: dark outside, white inside, visible on any colour of the map.
  if (spec.mark) {
    const cx = colCentre(spec.mark.col), cy = rowCentre(spec.mark.row);
    for (let dy = -9; dy <= 9; dy++) {
      for (let dx = -9; dx <= 9; dx++) {
        const r = Math.hypot(dx, dy);
        if (r >= 6.5 && r < 8.5) setPixel(c, cx + dx, cy + dy, INK);
        else if (r >= 4.5 && r < 6.5) setPixel(c, cx + dx, cy + dy, [255, 255, 255]);
      }
    }
  }

  // X ticks and labels, thinned so the widest label still has room between its neighbours.
  const widest = Math.max(...spec.xValues.map((v) => textWidth(formatTick(v), S)));
  for (const i of tickIndices(cols, Math.max(2, Math.min(8, Math.floor(plotW / (widest + 14)))))) {
    const x = colCentre(i);
    fillRect(c, x, top + plotH + 1, 1, 6, INK);
    const t = formatTick(spec.xValues[i]);
    drawText(c, t, x - Math.floor(textWidth(t, S) / 2), top + plotH + 10, S, INK);
  }
  drawText(c, spec.xLabel, left + Math.floor((plotW - textWidth(spec.xLabel, S)) / 2), top + plotH + 36, S, INK);
  if (spec.note) {
    const scale = textWidth(spec.note, S) <= width - 20 ? S : 1;
    drawText(c, spec.note, Math.max(10, Math.floor((width - textWidth(spec.note, scale)) / 2)), top + plotH + 70, scale, FAINT);
  }

  // Y ticks and labels (right-aligned against the axis), axis label turned to read upwards.
  for (const j of tickIndices(rows, 10)) {
    const y = rowCentre(j);
    fillRect(c, left - 7, y, 6, 1, INK);
    const t = formatTick(spec.yValues[j]);
    drawText(c, t, left - 12 - textWidth(t, S), y - Math.floor((GLYPH_H * S) / 2), S, INK);
  }
  drawText(c, spec.yLabel, 24, top + Math.floor((plotH + textWidth(spec.yLabel, S)) / 2), S, INK, true);

  // Title, shrunk to scale 1 if it would not fit.
  const titleScale = textWidth(spec.title, S) <= width - 20 ? S : 1;
  drawText(c, spec.title, Math.max(10, Math.floor((width - textWidth(spec.title, titleScale)) / 2)), 10, titleScale, INK);

  // Colour bar: bottom = minimum, top = maximum, five labelled ticks.
  const barX = left + plotW + 34, barW = 26;
  for (let py = 0; py < plotH; py++) {
    const rgb = colourAt(1 - py / (plotH - 1)) as Rgb;
    fillRect(c, barX, top + py, barW, 1, rgb);
  }
  fillRect(c, barX - 1, top - 1, barW + 2, 1, INK);
  fillRect(c, barX - 1, top + plotH, barW + 2, 1, INK);
  fillRect(c, barX - 1, top - 1, 1, plotH + 2, INK);
  fillRect(c, barX + barW, top - 1, 1, plotH + 2, INK);
  for (let k = 0; k <= 4; k++) {
    const y = top + plotH - 1 - Math.round((k / 4) * (plotH - 1));
    fillRect(c, barX + barW + 1, y, 5, 1, INK);
    const v = hi > lo ? lo + ((hi - lo) * k) / 4 : lo;
    const t = Number.isFinite(v) ? Number(v.toPrecision(4)).toString() : String(v);
    drawText(c, t, barX + barW + 9, y - Math.floor((GLYPH_H * S) / 2), S, INK);
  }
  const bl = spec.barLabel;
  drawText(c, bl, Math.min(width - 4 - textWidth(bl, S), barX + Math.floor(barW / 2) - Math.floor(textWidth(bl, S) / 2)), top - 30, S, INK);
  return c;
}

/** 8-bit RGB PNG bytes of a canvas (pngjs, colour type 2). */
export function encodeRgbPng(c: Canvas): Uint8Array {
  const png = new PNG({ width: c.width, height: c.height, colorType: 2, inputColorType: 2, inputHasAlpha: false, bitDepth: 8 });
  png.data = Buffer.from(c.rgb.buffer, c.rgb.byteOffset, c.rgb.byteLength);
  const out = PNG.sync.write(png, { colorType: 2, inputColorType: 2, inputHasAlpha: false, bitDepth: 8 });
  return new Uint8Array(out.buffer, out.byteOffset, out.byteLength);
}
