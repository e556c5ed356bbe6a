// A 5×7 bitmap font of our own for the heat map's labels: digits, Latin letters and a little punctuation.
// Each glyph is seven rows of five cells ('#' ink, '.' paper), drawn by hand for this project.
// Pure data plus a text-measuring and text-drawing helper over an RGB pixel buffer; no Node, no DOM.

export const GLYPH_W = 5;
export const GLYPH_H = 7;

// Rows top to bottom. Lower-case letters sit on the same baseline as capitals (row 6); g, p, q and y have a
// shorter body so their tails fit in the seven rows.
const G: Record<string, string> = {
  '0': '.###. #...# #..## #.#.# ##..# #...# .###.',
  '1': '..#.. .##.. ..#.. ..#.. ..#.. ..#.. .###.',
  '2': '.###. #...# ....# ...#. ..#.. .#... #####',
  '3': '####. ....# ....# .###. ....# ....# ####.',
  '4': '...#. ..##. .#.#. #..#. ##### ...#. ...#.',
  '5': '##### #.... ####. ....# ....# #...# .###.',
  '6': '..##. .#... #.... ####. #...# #...# .###.',
  '7': '##### ....# ...#. ..#.. .#... .#... .#...',
  '8': '.###. #...# #...# .###. #...# #...# .###.',
  '9': '.###. #...# #...# .#### ....# ...#. .##..',
  A: '.###. #...# #...# ##### #...# #...# #...#',
  B: '####. #...# #...# ####. #...# #...# ####.',
  C: '.###. #...# #.... #.... #.... #...# .###.',
  D: '###.. #..#. #...# #...# #...# #..#. ###..',
  E: '##### #.... #.... ####. #.... #.... #####',
  F: '##### #.... #.... ####. #.... #.... #....',
  G: '.###. #...# #.... #.### #...# #...# .####',
  H: '#...# #...# #...# ##### #...# #...# #...#',
  I: '.###. ..#.. ..#.. ..#.. ..#.. ..#.. .###.',
  J: '..### ...#. ...#. ...#. ...#. #..#. .##..',
  K: '#...# #..#. #.#.. ##... #.#.. #..#. #...#',
  L: '#.... #.... #.... #.... #.... #.... #####',
  M: '#...# ##.## #.#.# #.#.# #...# #...# #...#',
  N: '#...# #...# ##..# #.#.# #..## #...# #...#',
  O: '.###. #...# #...# #...# #...# #...# .###.',
  P: '####. #...# #...# ####. #.... #.... #....',
  Q: '.###. #...# #...# #...# #.#.# #..#. .##.#',
  R: '####. #...# #...# ####. #.#.. #..#. #...#',
  S: '.#### #.... #.... .###. ....# ....# ####.',
  T: '##### ..#.. ..#.. ..#.. ..#.. ..#.. ..#..',
  U: '#...# #...# #...# #...# #...# #...# .###.',
  V: '#...# #...# #...# #...# #...# .#.#. ..#..',
  W: '#...# #...# #...# #.#.# #.#.# #.#.# .#.#.',
  X: '#...# #...# .#.#. ..#.. .#.#. #...# #...#',
  Y: '#...# #...# .#.#. ..#.. ..#.. ..#.. ..#..',
  Z: '##### ....# ...#. ..#.. .#... #.... #####',
  a: '..... ..... .###. ....# .#### #...# .####',
  b: '#.... #.... #.##. ##..# #...# #...# ####.',
  c: '..... ..... .###. #.... #.... #...# .###.',
  d: '....# ....# .#.## #..## #...# #...# .####',
  e: '..... ..... .###. #...# ##### #.... .###.',
  f: '..##. .#..# .#... ###.. .#... .#... .#...',
  g: '..... ..... .#### #...# .#### ....# .###.',
  h: '#.... #.... #.##. ##..# #...# #...# #...#',
  i: '..#.. ..... .##.. ..#.. ..#.. ..#.. .###.',
  j: '...#. ..... ..##. ...#. ...#. #..#. .##..',
  k: '#.... #.... #..#. #.#.. ##... #.#.. #..#.',
  l: '.##.. ..#.. ..#.. ..#.. ..#.. ..#.. .###.',
  m: '..... ..... ##.#. #.#.# #.#.# #...# #...#',
  n: '..... ..... #.##. ##..# #...# #...# #...#',
  o: '..... ..... .###. #...# #...# #...# .###.',
  p: '..... ..... ####. #...# ####. #.... #....',
  q: '..... ..... .#### #...# .#### ....# ....#',
  r: '..... ..... #.##. ##..# #.... #.... #....',
  s: '..... ..... .#### #.... .###. ....# ####.',
  t: '.#... .#... ###.. .#... .#... .#..# ..##.',
  u: '..... ..... #...# #...# #...# #..## .##.#',
  v: '..... ..... #...# #...# #...# .#.#. ..#..',
  w: '..... ..... #...# #...# #.#.# #.#.# .#.#.',
  x: '..... ..... #...# .#.#. ..#.. .#.#. #...#',
  y: '..... ..... #...# #...# .#### ....# .###.',
  z: '..... ..... ##### ...#. ..#.. .#... #####',
  ' ': '..... ..... ..... ..... ..... ..... .....',
  '.': '..... ..... ..... ..... ..... .##.. .##..',
  ',': '..... ..... ..... ..... .##.. ..#.. .#...',
  ':': '..... .##.. .##.. ..... .##.. .##.. .....',
  '-': '..... ..... ..... .###. ..... ..... .....',
  '+': '..... ..#.. ..#.. ##### ..#.. ..#.. .....',
  '=': '..... ..... ##### ..... ##### ..... .....',
  '(': '...#. ..#.. .#... .#... .#... ..#.. ...#.',
  ')': '.#... ..#.. ...#. ...#. ...#. ..#.. .#...',
  '/': '....# ...#. ...#. ..#.. .#... .#... #....',
  '_': '..... ..... ..... ..... ..... ..... #####',
  '×': '..... #...# .#.#. ..#.. .#.#. #...# .....',
  'σ': '..... ..... .#### #..#. #...# #...# .###.',
  '|': '..#.. ..#.. ..#.. ..#.. ..#.. ..#.. ..#..',
  'θ': '.###. #...# #...# ##### #...# #...# .###.',
  'π': '..... ..... ##### .#.#. .#.#. .#.#. .#..#',
  '−': '..... ..... ..... ##### ..... ..... .....',
  '–': '..... ..... ..... ##### ..... ..... .....',
  '?': '.###. #...# ....# ...#. ..#.. ..... ..#..',
  ';': '..... .##.. .##.. ..... .##.. ..#.. .#...',
  '[': '.###. .#... .#... .#... .#... .#... .###.',
  ']': '.###. ...#. ...#. ...#. ...#. ...#. .###.',
  '<': '...#. ..#.. .#... #.... .#... ..#.. ...#.',
  '>': '.#... ..#.. ...#. ....# ...#. ..#.. .#...',
  '%': '##..# ##.#. ...#. ..#.. .#... .#.## #..##',
  '!': '..#.. ..#.. ..#.. ..#.. ..#.. ..... ..#..',
  "'": '..#.. ..#.. ..... ..... ..... ..... .....',
};

const GLYPHS = new Map<string, Uint8Array>();
for (const [ch, rows] of Object.entries(G)) {
  const parts = rows.split(' ');
  if (parts.length !== GLYPH_H || parts.some((r) => r.length !== GLYPH_W)) throw new Error(`glyph '${ch}' is not ${GLYPH_W}×${GLYPH_H}`);
  const bits = new Uint8Array(GLYPH_W * GLYPH_H);
  parts.forEach((row, y) => {
    for (let x = 0; x < GLYPH_W; x++) bits[y * GLYPH_W + x] = row[x] === '#' ? 1 : 0;
  });
  GLYPHS.set(ch, bits);
}

/** Glyph cells of one character; unknown characters draw as '?'. */
export function glyph(ch: string): Uint8Array {
  return GLYPHS.get(ch) ?? (GLYPHS.get('?') as Uint8Array);
}

export function hasGlyph(ch: string): boolean {
  return GLYPHS.has(ch);
}

/** An RGB canvas: 3 bytes per pixel, row-major. */
export interface Canvas {
  readonly width: number;
  readonly height: number;
  readonly rgb: Uint8Array;
}

export function createCanvas(width: number, height: number, background: readonly [number, number, number] = [255, 255, 255]): Canvas {
  const rgb = new Uint8Array(width * height * 3);
  for (let i = 0; i < width * height; i++) rgb.set(background, i * 3);
  return { width, height, rgb };
}

export function setPixel(c: Canvas, x: number, y: number, colour: readonly [number, number, number]): void {
  if (x < 0 || y < 0 || x >= c.width || y >= c.height) return;
  c.rgb.set(colour, (y * c.width + x) * 3);
}

export function fillRect(c: Canvas, x: number, y: number, w: number, h: number, colour: readonly [number, number, number]): void {
  for (let j = Math.max(0, y); j < Math.min(c.height, y + h); j++) {
    for (let i = Math.max(0, x); i < Math.min(c.width, x + w); i++) c.rgb.set(colour, (j * c.width + i) * 3);
  }
}

/** Width in pixels of `text` at `scale` (one blank cell between glyphs). */
export function textWidth(text: string, scale: number): number {
  const n = [...text].length;
  return n === 0 ? 0 : (n * (GLYPH_W + 1) - 1) * scale;
}

/** Draws text with its top-left corner at (x, y); `vertical` turns it 90° anticlockwise (reads bottom to top). */
export function drawText(c: Canvas, text: string, x: number, y: number, scale: number, colour: readonly [number, number, number], vertical = false): void {
  let pen = 0;
  for (const ch of text) {
    const bits = glyph(ch);
    for (let gy = 0; gy < GLYPH_H; gy++) {
      for (let gx = 0; gx < GLYPH_W; gx++) {
        if (!bits[gy * GLYPH_W + gx]) continue;
        for (let sy = 0; sy < scale; sy++) {
          for (let sx = 0; sx < scale; sx++) {
            const u = pen + gx * scale + sx; // along the text
            const v = gy * scale + sy; // across the text
            if (vertical) setPixel(c, x + v, y - u, colour);
            else setPixel(c, x + u, y + v, colour);
          }
        }
      }
    }
    pen += (GLYPH_W + 1) * scale;
  }
}
