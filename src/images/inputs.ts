// The pictures a run is given and how a scheme's `image` fields bind to them: the main input and named inputs
// (`image "mask"`), each held with its red, green, blue, alpha and luma channels; the binding of fields to
// channels, with clear errors (and the field's source range) for inputs that are missing or of another size;
// the generated inputs (a colour scene and a mask) that let the demos run without user files.
// Pure: no Node, no vscode, no DOM.

import type { SourceRange } from '../notation/ast';
import { IMAGE_CHANNELS, type CheckedScheme, type FieldInfo, type ImageChannel } from '../notation/scheme';
import { deriveSeed, gaussian, mulberry32 } from './random';
import { makeScene, resolveSceneName } from './scenes';
import { ImageError, type DecodedImage, type GreyImage } from './types';
import { LUMA_709 } from './values';

/** One picture with every channel a field may pick; grey pictures hold their grey value in red, green, blue and luma. */
export interface InputPicture {
  readonly width: number;
  readonly height: number;
  /** True when the source stored colour (so red, green and blue may differ). */
  readonly colour: boolean;
  readonly channels: Readonly<Record<ImageChannel, Float32Array>>;
}

/** The main input (null: none given) and the named inputs by name. */
export interface InputSet {
  readonly main: InputPicture | null;
  readonly named: ReadonlyMap<string, InputPicture>;
}

/** From a decoded file read with `channels: 'all'` (R, G, B, A, Y). */
export function pictureFromDecoded(d: DecodedImage): InputPicture {
  if (d.channelNames.join() !== 'R,G,B,A,Y') throw new ImageError('bad-option', `decode with channels: 'all' to bind channels (got ${d.channelNames.join(', ')})`);
  const [r, g, b, a, y] = d.channels.map(c => c.data);
  return { width: d.width, height: d.height, colour: d.colour, channels: { red: r, green: g, blue: b, alpha: a, luma: y } };
}

/** A grey picture: its values in every colour channel and as luma, alpha 1. */
export function pictureFromGrey(image: GreyImage): InputPicture {
  const alpha = new Float32Array(image.data.length).fill(1);
  const d = image.data;
  return { width: image.width, height: image.height, colour: false, channels: { red: d, green: d, blue: d, alpha, luma: d } };
}

/** A colour picture from three channels; luma by the BT.709 weights in Float64, rounded once (as the decoders do). */
export function pictureFromRgb(width: number, height: number, red: Float32Array, green: Float32Array, blue: Float32Array): InputPicture {
  const n = width * height;
  if (red.length !== n || green.length !== n || blue.length !== n) throw new ImageError('bad-option', `colour channels do not match ${width}×${height}`);
  const luma = new Float32Array(n);
  for (let i = 0; i < n; i++) luma[i] = LUMA_709.r * red[i] + LUMA_709.g * green[i] + LUMA_709.b * blue[i];
  return { width, height, colour: true, channels: { red, green, blue, alpha: new Float32Array(n).fill(1), luma } };
}

/** One channel as a grey image; null (plain `image`) is the luma, which for grey pictures is the grey value. */
export function channelImage(p: InputPicture, channel: ImageChannel | null): GreyImage {
  return { width: p.width, height: p.height, data: p.channels[channel ?? 'luma'] };
}

/** Why a binding failed; `range` is the field declaration that asks for the input. */
export type InputErrorCode = 'input-missing' | 'input-size' | 'input-unused';

export class InputBindingError extends Error {
  constructor(readonly code: InputErrorCode, message: string, readonly field: string | null, readonly range: SourceRange | null) {
    super(message);
    this.name = 'InputBindingError';
  }
}

/** The `image` fields of a scheme with their bindings, in declaration order. */
export function imageFields(scheme: CheckedScheme): { field: FieldInfo; input: string | null; channel: ImageChannel | null }[] {
  const out: { field: FieldInfo; input: string | null; channel: ImageChannel | null }[] = [];
  for (const f of scheme.fields) if (f.init.kind === 'image') out.push({ field: f, input: f.init.input, channel: f.init.channel });
  return out;
}

/** The named inputs a scheme reads, in order of first use. */
export function namedInputs(scheme: CheckedScheme): string[] {
  const names: string[] = [];
  for (const b of imageFields(scheme)) if (b.input !== null && !names.includes(b.input)) names.push(b.input);
  return names;
}

/** Whether some field reads the main input. */
export function readsMainInput(scheme: CheckedScheme): boolean {
  return imageFields(scheme).some(b => b.input === null);
}

/** True when the scheme binds red, green and blue of one input: its result can be shown and written in colour. */
export function colourFields(scheme: CheckedScheme): { red: string; green: string; blue: string } | null {
  const find = (c: ImageChannel): FieldInfo | undefined => scheme.fields.find(f => f.init.kind === 'image' && f.init.channel === c && f.init.input === null);
  const r = find('red'), g = find('green'), b = find('blue');
  return r && g && b ? { red: r.name, green: g.name, blue: b.name } : null;
}

const describeInput = (name: string | null): string => (name === null ? 'the main input' : `the input "${name}"`);
const fieldText = (b: { field: FieldInfo; input: string | null; channel: ImageChannel | null }): string =>
  `field ${b.field.name} = image${b.input !== null ? ` "${b.input}"` : ''}${b.channel ? `.${b.channel}` : ''}`;

/**
 * The picture of every `image` field, keyed by field name. Every input a field reads must be given, and all must
 * have one size (the main input's, else the first named input's). Inputs given but read by no field are refused too
 * (a misspelt `--input maks=...` should not pass silently). `hint` is appended to the missing-input message.
 */
export function bindInputs(scheme: CheckedScheme, set: InputSet, hint: (name: string | null) => string = () => ''): Record<string, GreyImage> {
  const bindings = imageFields(scheme);
  const wanted = new Set(bindings.map(b => b.input).filter((n): n is string => n !== null));
  for (const name of set.named.keys()) {
    if (!wanted.has(name)) {
      const known = [...wanted].map(n => `"${n}"`).join(', ');
      throw new InputBindingError('input-unused', `an input named "${name}" was given, but no field reads it (${known ? `the scheme reads ${known}` : 'the scheme reads no named input'}).`, null, null);
    }
  }
  let size: { width: number; height: number; what: string } | null = set.main ? { width: set.main.width, height: set.main.height, what: 'the main input' } : null;
  const out: Record<string, GreyImage> = {};
  for (const b of bindings) {
    const p = b.input === null ? set.main : set.named.get(b.input) ?? null;
    if (!p) {
      throw new InputBindingError('input-missing', `\`${fieldText(b)}\` reads ${describeInput(b.input)}, which was not given${hint(b.input)}.`, b.field.name, b.field.range);
    }
    if (!size) size = { width: p.width, height: p.height, what: describeInput(b.input) };
    else if (p.width !== size.width || p.height !== size.height) {
      throw new InputBindingError('input-size', `\`${fieldText(b)}\`: ${describeInput(b.input)} is ${p.width}×${p.height} pixels but ${size.what} is ${size.width}×${size.height}; all inputs of a run must have one size.`, b.field.name, b.field.range);
    }
    out[b.field.name] = channelImage(p, b.channel);
  }
  return out;
}

// ---------------------------------------------------------------- generated inputs

/** Generated inputs beyond the grey scenes of scenes.ts: `palette` (colour) and `mask` (a binary mask). */
export const GENERATED_INPUTS = ['palette', 'mask'] as const;

const smooth = (t: number): number => (t <= 0 ? 0 : t >= 1 ? 1 : t * t * (3 - 2 * t));

/**
 * `palette`: a colour chart of our own design: a soft diagonal background from teal to sand, six patches of
 * different hues (two of them with equal luma, so their border is an edge of colour only), a magenta disc and a
 * thin dark stroke. Clean values lie in [0, 1]; noise is N(0, σ²) per channel (seeds derived from `seed`), not clamped.
 */
export function makePalette(width: number, height: number, noise: number, seed: number): { clean: InputPicture; noisy: InputPicture } {
  const n = width * height;
  const r = new Float32Array(n), g = new Float32Array(n), b = new Float32Array(n);
  const patches: [number, number, number, number, [number, number, number]][] = [
    // x0, y0, x1, y1 as fractions of the size, and the colour.
    [0.08, 0.1, 0.3, 0.4, [0.85, 0.2, 0.15]],
    [0.3, 0.1, 0.52, 0.4, [0.2, 0.55, 0.2]],
    [0.56, 0.1, 0.9, 0.3, [0.15, 0.3, 0.85]],
    [0.08, 0.55, 0.4, 0.9, [0.95, 0.8, 0.1]],
    // Equal BT.709 luma (0.5) on both sides of x = 0.7: only the hue changes across that border.
    [0.5, 0.5, 0.7, 0.9, [0.9, 0.4, 0.6]],
    [0.7, 0.5, 0.92, 0.9, [0.2, 0.57, 0.43]],
  ];
  const cx = 0.5 * width, cy = 0.45 * height, rad = 0.12 * Math.min(width, height);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      const i = y * width + x;
      const u = (x + 0.5) / width, v = (y + 0.5) / height;
      const s = 0.5 * (u + v);
      let c: [number, number, number] = [0.25 + 0.5 * s, 0.55 + 0.2 * s, 0.55 - 0.15 * s];
      for (const [x0, y0, x1, y1, col] of patches) if (u >= x0 && u < x1 && v >= y0 && v < y1) c = col;
      const d = Math.hypot(x + 0.5 - cx, y + 0.5 - cy);
      const w = 1 - smooth(d - rad + 0.5);
      c = [c[0] * (1 - w) + 0.85 * w, c[1] * (1 - w) + 0.15 * w, c[2] * (1 - w) + 0.8 * w];
      if (Math.abs(v - 0.47 - 0.1 * Math.sin(6 * u)) < 0.6 / height + 0.004) c = [0.1, 0.08, 0.12];
      r[i] = c[0]; g[i] = c[1]; b[i] = c[2];
    }
  }
  const add = (src: Float32Array, k: number): Float32Array => {
    const out = new Float32Array(src);
    if (noise > 0) {
      const z = gaussian(mulberry32(deriveSeed(seed, 10 + k)));
      for (let i = 0; i < n; i++) out[i] = src[i] + noise * z();
    }
    return out;
  };
  return { clean: pictureFromRgb(width, height, r, g, b), noisy: pictureFromRgb(width, height, add(r, 0), add(g, 1), add(b, 2)) };
}

/**
 * `mask`: 1 inside a disc (centre at 35 %, 45 % of the size, radius 22 % of the shorter side) and inside a bar along
 * the bottom right (60–92 % across, 70–85 % down), 0 elsewhere; no noise. Pixel (x, y) is inside when its centre is.
 */
export function makeMask(width: number, height: number): GreyImage {
  const data = new Float32Array(width * height);
  const cx = 0.35 * width, cy = 0.45 * height, rad = 0.22 * Math.min(width, height);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      const u = (x + 0.5) / width, v = (y + 0.5) / height;
      const inDisc = Math.hypot(x + 0.5 - cx, y + 0.5 - cy) <= rad;
      const inBar = u >= 0.6 && u <= 0.92 && v >= 0.7 && v <= 0.85;
      data[y * width + x] = inDisc || inBar ? 1 : 0;
    }
  }
  return { width, height, data };
}

/** A generated input by name: a grey scene (scenes.ts), `palette` or `mask`; with the clean picture when there is one. */
export function makeInput(name: string, opts: { width?: number; height?: number; noise?: number; seed?: number } = {}): { name: string; noisy: InputPicture; clean: InputPicture | null; seed: number; noise: number } {
  const width = opts.width ?? 256, height = opts.height ?? 256;
  const seed = (opts.seed ?? 1) >>> 0;
  const noise = opts.noise ?? 0.05;
  if (name === 'palette') {
    if (!(noise >= 0) || !Number.isFinite(noise)) throw new ImageError('bad-option', `scene noise must be a finite sigma >= 0, got ${noise}`);
    if (![width, height].every(v => Number.isInteger(v) && v >= 1 && v <= 16384)) throw new ImageError('bad-option', `scene size must be whole numbers in 1..16384, got ${width}×${height}`);
    const p = makePalette(width, height, noise, seed);
    return { name, noisy: p.noisy, clean: p.clean, seed, noise };
  }
  if (name === 'mask') {
    if (![width, height].every(v => Number.isInteger(v) && v >= 1 && v <= 16384)) throw new ImageError('bad-option', `scene size must be whole numbers in 1..16384, got ${width}×${height}`);
    const m = pictureFromGrey(makeMask(width, height));
    return { name, noisy: m, clean: m, seed, noise: 0 };
  }
  if (resolveSceneName(name) === null) {
    throw new ImageError('bad-option', `unknown scene '${name}'; known scenes: survey, cells, card (and aliases), ${GENERATED_INPUTS.join(', ')}`);
  }
  const s = makeScene(name, { width, height, noise, seed });
  return { name: s.name, noisy: pictureFromGrey(s.noisy), clean: pictureFromGrey(s.clean), seed: s.options.seed, noise: s.options.noise };
}

export { IMAGE_CHANNELS };
