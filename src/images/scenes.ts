// Generated demo scenes of our own design (survey tile, cell slide, test card) with seeded noise.
// Pure and deterministic: integer PRNG from random.ts and plain arithmetic; must not import Node or codecs.
//
// Clamping: clean values lie in [0,1] by construction. Gaussian noise is added WITHOUT clamping, so noisy
// values may leave [0,1] and (noisy - clean) has honest N(0, sigma^2) statistics; salt-and-pepper sets pixels
// to exactly 0 or 1. The scene geometry is fixed per scene; `seed` only drives the noise, so different seeds
// give different noise on the same clean picture.

import { gaussian, mulberry32, deriveSeed, uniform } from './random';
import { GreyImage, ImageError } from './types';

export type SceneName = 'survey' | 'cells' | 'card';

export interface SceneOptions {
  width?: number; // default 256
  height?: number; // default 256
  noise?: number; // Gaussian sigma in value units, default 0.05
  saltPepper?: number; // fraction of pixels set to 0 or 1 (half each on average), default 0
  seed?: number; // default 1; taken as an unsigned 32-bit integer
}

export interface Scene {
  name: SceneName;
  description: string;
  clean: GreyImage;
  noisy: GreyImage;
  /** The options actually used, defaults filled in. */
  options: Required<SceneOptions>;
  /** Always false: noisy values are not clamped (see the module comment). */
  clamped: false;
}

const DESCRIPTIONS: Record<SceneName, string> = {
  survey:
    'Aerial survey tile: four plots of different grey levels, two with crop rows at different angles and periods, ' +
    'a dark curved track, a smooth dark pond with a soft shore and a small bright roof.',
  cells:
    'Cell-culture slide: bright soft blobs with Gaussian profiles in three sizes on a dim, slightly uneven background.',
  card:
    'Test card: step edges of several contrasts, a 0-to-1 ramp, fine stripes of period 2, 3 and 4 px, ' +
    'one-pixel lines and a low-contrast disc.',
};

const ALIASES: Record<string, SceneName> = {
  survey: 'survey',
  'survey-tile': 'survey',
  cells: 'cells',
  'cell-slide': 'cells',
  card: 'card',
  'test-card': 'card',
};

export function listScenes(): { name: SceneName; aliases: string[]; description: string }[] {
  return (Object.keys(DESCRIPTIONS) as SceneName[]).map((name) => ({
    name,
    aliases: Object.keys(ALIASES).filter((a) => ALIASES[a] === name && a !== name),
    description: DESCRIPTIONS[name],
  }));
}

/** Canonical scene name for a name or alias; null when unknown. */
export function resolveSceneName(name: string): SceneName | null {
  return Object.prototype.hasOwnProperty.call(ALIASES, name) ? ALIASES[name] : null;
}

const clamp01 = (v: number): number => (v < 0 ? 0 : v > 1 ? 1 : v);
const smoothstep = (t: number): number => {
  const c = clamp01(t);
  return c * c * (3 - 2 * c);
};
/** Triangle wave in [0,1] with period 1: 0 at integers, 1 at half-integers. */
const tri = (s: number): number => {
  const f = s - Math.floor(s);
  return 1 - Math.abs(2 * f - 1);
};

function survey(w: number, h: number): Float32Array {
  const out = new Float32Array(w * h);
  const s = Math.min(w, h) / 256;
  const periodA = Math.max(2, 6 * s);
  const periodC = Math.max(2, 9 * s);
  // Track: an arc of a large circle whose centre lies outside the tile, so it crosses the top-left plots as a curve.
  const cx = -0.2 * w;
  const cy = -0.3 * h;
  const radius = 0.95 * Math.sqrt(w * h);
  const halfWidth = Math.max(1, 3 * s);
  for (let y = 0; y < h; y++) {
    const v = (y + 0.5) / h;
    for (let x = 0; x < w; x++) {
      const u = (x + 0.5) / w;
      const px = x + 0.5;
      const py = y + 0.5;
      // Plot boundaries are slightly slanted lines, so no edge is exactly axis-aligned.
      const right = u > 0.42 + 0.05 * v;
      const lower = v > 0.55 - 0.04 * u;
      let val: number;
      if (!right && !lower) val = 0.52 + 0.1 * (2 * tri((0.8 * px + 0.6 * py) / periodA) - 1); // rows along direction (-3,4)/5
      else if (right && !lower) val = 0.68;
      else if (!right && lower) val = 0.45 + 0.08 * (2 * tri((-0.6 * px + 0.8 * py) / periodC) - 1);
      else val = 0.38;
      if (u > 0.78 && u < 0.86 && v > 0.12 && v < 0.2) val = 0.88; // roof
      const d = Math.abs(Math.hypot(px - cx, py - cy) - radius);
      const onTrack = clamp01((halfWidth + 0.75 - d) / 1.5); // 1.5-px linear soft edge
      val += (0.26 - val) * onTrack;
      const r = Math.hypot((u - 0.7) / 0.14, (v - 0.74) / 0.1);
      const water = 0.1 + 0.06 * Math.min(r, 1); // deeper (darker) towards the centre
      val = r < 1 ? water : water + (val - water) * smoothstep((r - 1) / 0.3);
      out[y * w + x] = clamp01(val);
    }
  }
  return out;
}

function cells(w: number, h: number): Float32Array {
  const out = new Float32Array(w * h);
  // Background: a gentle ramp plus one broad bump (uneven illumination).
  for (let y = 0; y < h; y++) {
    const v = (y + 0.5) / h;
    for (let x = 0; x < w; x++) {
      const u = (x + 0.5) / w;
      const du = u - 0.3;
      const dv = v - 0.7;
      out[y * w + x] = 0.12 + 0.06 * u + 0.04 * v + 0.05 * Math.exp(-(du * du + dv * dv) / (2 * 0.25 * 0.25));
    }
  }
  // Store darkness (1 - value); each blob multiplies it by (1 - a g), so values stay in [0,1] where blobs overlap.
  for (let i = 0; i < out.length; i++) out[i] = 1 - out[i];
  const s = Math.min(w, h) / 256;
  const count = Math.max(3, Math.round((40 * w * h) / 65536));
  const layout = uniform(mulberry32(0xce11)); // fixed layout: seed drives only the noise
  const sizes = [2, 3.5, 6];
  for (let k = 0; k < count; k++) {
    const bx = layout() * w;
    const by = layout() * h;
    const sigma = Math.max(0.75, sizes[Math.floor(layout() * 3)] * s);
    const amp = 0.35 + 0.4 * layout();
    // Beyond 5 sigma the profile is below exp(-12.5) = 4e-6 of its peak; the window skips it.
    const reach = Math.ceil(5 * sigma);
    const x0 = Math.max(0, Math.floor(bx - reach));
    const x1 = Math.min(w - 1, Math.ceil(bx + reach));
    const y0 = Math.max(0, Math.floor(by - reach));
    const y1 = Math.min(h - 1, Math.ceil(by + reach));
    const k2 = 1 / (2 * sigma * sigma);
    // The Gaussian factorises, exp(-(dx^2 + dy^2) k) = exp(-dx^2 k) exp(-dy^2 k), so one row of x factors serves all rows.
    const gx = new Float64Array(x1 - x0 + 1);
    for (let x = x0; x <= x1; x++) gx[x - x0] = Math.exp(-((x + 0.5 - bx) ** 2) * k2);
    for (let y = y0; y <= y1; y++) {
      const ay = amp * Math.exp(-((y + 0.5 - by) ** 2) * k2);
      for (let x = x0; x <= x1; x++) out[y * w + x] *= 1 - ay * gx[x - x0];
    }
  }
  for (let i = 0; i < out.length; i++) out[i] = clamp01(1 - out[i]);
  return out;
}

function card(w: number, h: number): Float32Array {
  const out = new Float32Array(w * h);
  const steps = [0.1, 0.9, 0.35, 0.65];
  const lineX = Math.min(w - 1, Math.floor(0.72 * w));
  const lineY = Math.min(h - 1, Math.floor(0.92 * h));
  const discR = 0.15 * Math.min(w, h);
  for (let y = 0; y < h; y++) {
    const v = (y + 0.5) / h;
    for (let x = 0; x < w; x++) {
      const u = (x + 0.5) / w;
      let val: number;
      if (v < 0.25) val = steps[Math.min(3, Math.floor(4 * u))];
      else if (v < 0.4) val = w > 1 ? x / (w - 1) : 0.5;
      else if (v < 0.55) {
        // Stripes at pixel scale whatever the image size: period 2, then 3, then 4 pixels.
        if (u < 1 / 3) val = x % 2 === 0 ? 0.8 : 0.2;
        else if (u < 2 / 3) val = x % 3 === 0 ? 0.8 : 0.2;
        else val = x % 4 < 2 ? 0.8 : 0.2;
      } else {
        val = 0.5;
        if (Math.hypot(x + 0.5 - 0.3 * w, y + 0.5 - 0.77 * h) < discR) val = 0.56;
        if (x === lineX) val = 0.9;
        if (y === lineY && x > 0.5 * w) val = 0.15;
      }
      out[y * w + x] = val;
    }
  }
  return out;
}

function checkSize(v: number, name: string): number {
  if (!Number.isInteger(v) || v < 1 || v > 16384) throw new ImageError('bad-option', `scene ${name} must be an integer in 1..16384, got ${v}`);
  return v;
}

/** Builds a scene; see the module comment for the clamping rule and what the seed controls. */
export function makeScene(name: SceneName | string, opts: SceneOptions = {}): Scene {
  const canonical = resolveSceneName(name);
  if (canonical === null) {
    const known = Object.keys(ALIASES).join(', ');
    throw new ImageError('bad-option', `unknown scene '${name}'; known scenes: ${known}`);
  }
  const width = checkSize(opts.width ?? 256, 'width');
  const height = checkSize(opts.height ?? 256, 'height');
  const noise = opts.noise ?? 0.05;
  const saltPepper = opts.saltPepper ?? 0;
  const seed = (opts.seed ?? 1) >>> 0;
  if (!(noise >= 0) || !Number.isFinite(noise)) throw new ImageError('bad-option', `scene noise must be a finite sigma >= 0, got ${noise}`);
  if (!(saltPepper >= 0 && saltPepper <= 1)) throw new ImageError('bad-option', `scene saltPepper must be in [0, 1], got ${saltPepper}`);

  const data = canonical === 'survey' ? survey(width, height) : canonical === 'cells' ? cells(width, height) : card(width, height);
  const noisy = new Float32Array(data);
  if (noise > 0) {
    const z = gaussian(mulberry32(deriveSeed(seed, 1)));
    for (let i = 0; i < noisy.length; i++) noisy[i] = data[i] + noise * z();
  }
  if (saltPepper > 0) {
    const u = uniform(mulberry32(deriveSeed(seed, 2)));
    for (let i = 0; i < noisy.length; i++) if (u() < saltPepper) noisy[i] = u() < 0.5 ? 0 : 1;
  }
  return {
    name: canonical,
    description: DESCRIPTIONS[canonical],
    clean: { width, height, data },
    noisy: { width, height, data: noisy },
    options: { width, height, noise, saltPepper, seed },
    clamped: false,
  };
}
