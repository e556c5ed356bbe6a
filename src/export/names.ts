// Everything user text can become in generated code: identifiers (sanitised, kept clear of each target's
// keywords and of the names the exporters use themselves), numbers (re-printed from parsed values) and
// comment text (escaped so it can never close a comment or start a new line). Pure: no Node, vscode or DOM.

import { ExportError } from './ir';

export type Target = 'c' | 'numpy' | 'dask' | 'js';

const C_WORDS = 'auto break case char const continue default do double else enum extern float for goto if inline int long register restrict return short signed sizeof static struct switch typedef union unsigned void volatile while _Bool _Complex _Imaginary NULL NAN INFINITY main errno fabs sqrt exp log sin cos tanh pow floor size_t ptrdiff_t width height steps dt t0 first_step p params scratch scratch_bytes defaults';
const PY_WORDS = 'False None True and as assert async await break class continue def del elif else except finally for from global if import in is lambda nonlocal not or pass raise return try while with yield np da math image shape steps dt t0 first_step chunks dtype self print len range float int step run init fields depth boundary halo t y0 y1 x0 x1 taps pad plan core init_region dask_step dask_run dask_init persist_every DTYPE FIELDS DEFAULTS PAD DASK_BOUNDARY';
const JS_WORDS = 'break case catch class const continue debugger default delete do else enum export extends false finally for function if import in instanceof let new null return super switch this throw true try typeof var void while with yield await static implements interface package private protected public arguments eval undefined NaN Infinity Math Float32Array Float64Array Object width height steps dt t0 firstStep fields options defaults init run';

const RESERVED: Record<Target, ReadonlySet<string>> = {
  c: new Set(C_WORDS.split(' ')),
  numpy: new Set(PY_WORDS.split(' ')),
  dask: new Set(PY_WORDS.split(' ')),
  js: new Set(JS_WORDS.split(' ')),
};

/**
 * Public names for the user's fields and params in one target: the spelling reduced to [A-Za-z0-9_] (the
 * notation's identifiers already are), `user_` put before names starting with our internal prefix `fx_` (or `__`),
 * and a trailing `_` added while it is a keyword or taken. Internal names all start with `fx_`, so they never
 * meet a user's name.
 */
export class PublicNames {
  private readonly taken = new Set<string>();
  constructor(readonly target: Target) {}
  name(original: string): string {
    let s = original.replace(/[^A-Za-z0-9_]/g, '_');
    if (!/^[A-Za-z_]/.test(s)) s = `n_${s}`;
    // Our internal prefix and Python's dunder names are moved out of the way by a prefix, keywords by a suffix.
    if (/^fx_/i.test(s) || s.startsWith('__')) s = `user_${s}`;
    while (RESERVED[this.target].has(s) || this.taken.has(s)) s += '_';
    this.taken.add(s);
    return s;
  }
}

/** A C identifier prefix from the scheme's file name: lower case, [a-z0-9_], never empty, never a digit first. */
export function schemePrefix(fileName: string): string {
  const base = fileName.replace(/^.*[\\/]/, '').replace(/\.fluxel$/i, '');
  let s = base.toLowerCase().replace(/[^a-z0-9_]+/g, '_').replace(/^_+|_+$/g, '');
  if (s === '') s = 'scheme';
  if (/^[0-9]/.test(s)) s = `s_${s}`;
  if (RESERVED.c.has(s) || /^fx_/.test(s)) s = `${s}_scheme`;
  return s.slice(0, 48);
}

/** Shortest round-trip decimal of a finite number, checked against a digits-only alphabet. */
function digits(v: number): string {
  const s = String(Math.abs(v));
  if (!/^[0-9]+(\.[0-9]+)?(e[+-][0-9]+)?$/.test(s)) throw new ExportError(`cannot print the number ${s}`);
  return s;
}

/** A number as a literal of `target`; negative values are parenthesised so they can follow any operator. */
export function numberLiteral(v: unknown, target: Target): string {
  if (typeof v !== 'number') throw new ExportError('a number literal is not a number');
  const py = target === 'numpy' || target === 'dask';
  if (Number.isNaN(v)) return target === 'c' ? 'NAN' : py ? 'fx_np.nan' : 'NaN';
  if (!Number.isFinite(v)) {
    const inf = target === 'c' ? 'INFINITY' : py ? 'fx_np.inf' : 'Infinity';
    return v > 0 ? inf : `(-${inf})`;
  }
  let s = digits(v);
  // C and Python need a point or exponent to make a floating literal (1 / 2 is 0 in C).
  if (target !== 'js' && !/[.e]/.test(s)) s += '.0';
  if (Object.is(v, -0) || v < 0) return `(-${s})`;
  return s;
}

/** An integer literal (halo radii, offsets, counts). */
export function intLiteral(v: number): string {
  if (!Number.isInteger(v)) throw new ExportError(`expected a whole number, got ${v}`);
  return v < 0 ? `(${v})` : String(v);
}

/**
 * Text safe inside a comment of any target: printable ASCII only (others as \uXXXX), no comment closers
 * or openers, never a line break. Used for the scheme's names and file name in headers.
 */
export function commentText(s: string): string {
  let out = '';
  for (const ch of s) {
    const c = ch.codePointAt(0) as number;
    // A backslash could splice lines in C (also as the trigraph ??/): it is written as its escape text.
    if (ch === '\\') out += '\\u005c';
    else if (c >= 0x20 && c < 0x7f) out += ch;
    else out += c <= 0xffff ? `\\u${c.toString(16).padStart(4, '0')}` : `\\u{${c.toString(16)}}`;
  }
  return out.replace(/\*\//g, '*\\/').replace(/\/\*/g, '/\\*').replace(/\?\?/g, '?\\u003f');
}
