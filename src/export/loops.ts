// Pixel-loop code shared by the C and JavaScript exporters: the step body (ghost refill, lets over the extended
// grid, separable blur, the fused update loop, buffer swaps) printed from the IR in either language.
// The loop structure copies the engine's (padded buffers, same loop bounds, same summation order), so values match.
// Pure string building: no Node, vscode or DOM.

import type { ExportIR, Node, OpName } from './ir';
import { intLiteral, numberLiteral } from './names';

export type LoopLang = 'c' | 'js';

export interface LoopOptions {
  readonly lang: LoopLang;
  readonly dtype: 'float32' | 'float64';
}

/** Prints one op with already-named arguments. Results are doubles (C) or numbers (JS), as in the engine. */
function opText(op: OpName, a: readonly string[], lang: LoopLang): string {
  const c = lang === 'c';
  const one = c ? '1.0' : '1', zero = c ? '0.0' : '0';
  const eq = c ? '==' : '===', ne = c ? '!=' : '!==';
  const M = c ? '' : 'Math.';
  switch (op) {
    case 'neg': return `(-${a[0]})`;
    case 'pos': return `(+${a[0]})`;
    case 'not': return `(${a[0]} ${eq} 0 ? ${one} : ${zero})`;
    case 'add': return `(${a[0]} + ${a[1]})`;
    case 'sub': return `(${a[0]} - ${a[1]})`;
    case 'mul': return `(${a[0]} * ${a[1]})`;
    case 'div': return `(${a[0]} / ${a[1]})`;
    case 'pow': return `${M}pow(${a[0]}, ${a[1]})`;
    case 'lt': return `(${a[0]} < ${a[1]} ? ${one} : ${zero})`;
    case 'le': return `(${a[0]} <= ${a[1]} ? ${one} : ${zero})`;
    case 'gt': return `(${a[0]} > ${a[1]} ? ${one} : ${zero})`;
    case 'ge': return `(${a[0]} >= ${a[1]} ? ${one} : ${zero})`;
    case 'eq': return `(${a[0]} ${eq} ${a[1]} ? ${one} : ${zero})`;
    case 'ne': return `(${a[0]} ${ne} ${a[1]} ? ${one} : ${zero})`;
    case 'and': return `(${a[0]} ${ne} 0 && ${a[1]} ${ne} 0 ? ${one} : ${zero})`;
    case 'or': return `(${a[0]} ${ne} 0 || ${a[1]} ${ne} 0 ? ${one} : ${zero})`;
    case 'select': return `(${a[0]} ${ne} 0 ? ${a[1]} : ${a[2]})`;
    case 'abs': return c ? `fabs(${a[0]})` : `Math.abs(${a[0]})`;
    case 'sqrt': case 'exp': case 'log': case 'sin': case 'cos': case 'tanh': return `${M}${op}(${a[0]})`;
    // Math.sign/min/max semantics (NaN propagates, -0 kept) come from small helpers in the C prologue.
    case 'sign': return c ? `fx_sign(${a[0]})` : `Math.sign(${a[0]})`;
    case 'min': return c ? `fx_min(${a[0]}, ${a[1]})` : `Math.min(${a[0]}, ${a[1]})`;
    case 'max': return c ? `fx_max(${a[0]}, ${a[1]})` : `Math.max(${a[0]}, ${a[1]})`;
    case 'clamp': return c ? `fx_min(fx_max(${a[0]}, ${a[1]}), ${a[2]})` : `Math.min(Math.max(${a[0]}, ${a[1]}), ${a[2]})`;
  }
}

/** C prologue helpers giving JavaScript's Math.sign/min/max results (NaN in, NaN out; -0 below +0). */
export const C_MATH_HELPERS = [
  'static inline double fx_sign(double a) { return a > 0 ? 1.0 : a < 0 ? -1.0 : a; }',
  'static inline double fx_min(double a, double b) { if (a != a || b != b) return NAN; if (a == b) return signbit(a) ? a : b; return a < b ? a : b; }',
  'static inline double fx_max(double a, double b) { if (a != a || b != b) return NAN; if (a == b) return signbit(a) ? b : a; return a > b ? a : b; }',
];

/** Statements of one kernel: invariant ones before the pixel loops, the rest inside. */
interface KernelText {
  readonly hoisted: string[];
  readonly body: string[];
  readonly offsets: Map<string, [number, number]>;
}

class KernelPrinter {
  private readonly done = new Set<number>();
  readonly text: KernelText = { hoisted: [], body: [], offsets: new Map() };
  /** Fields whose new value is stored (update kernel): `new` leaves may read them. */
  readonly stored = new Set<number>();
  constructor(readonly ir: ExportIR, readonly o: LoopOptions, readonly place: 'init' | 'kernel') {}

  private offset(dx: number, dy: number): string {
    const name = `fx_o_${dx < 0 ? 'm' : ''}${Math.abs(dx)}_${dy < 0 ? 'm' : ''}${Math.abs(dy)}`;
    this.text.offsets.set(name, [dx, dy]);
    return name;
  }

  /** The text of a value: a leaf inline, an op by its temporary. */
  ref(id: number): string {
    const n: Node = this.ir.graph.nodes[id];
    const c = this.o.lang === 'c';
    switch (n.k) {
      case 'num': return numberLiteral(n.v, this.o.lang);
      case 'param': return `fx_p${n.i}`;
      case 'dt': return 'fx_dt';
      case 't': return 'fx_t';
      case 'x': return c ? '(double)fx_x' : 'fx_x';
      case 'y': return c ? '(double)fx_y' : 'fx_y';
      case 'read': {
        const buf = `${n.buf === 'field' ? 'fx_c' : 'fx_l'}${n.i}`;
        if (n.dx === 0 && n.dy === 0) return `${buf}[fx_i]`;
        return `${buf}[fx_i + ${this.offset(n.dx, n.dy)}]`;
      }
      case 'new':
        if (!this.stored.has(n.i)) throw new Error('a primed value read before its update');
        // Float32 semantics: a primed read sees the stored (rounded) value, as in the engine.
        return this.o.dtype === 'float32' ? `fx_d${n.i}[fx_i]` : `fx_n${n.i}`;
      case 'op': return `fx_v${id}`;
    }
  }

  /** Emits the statements `roots` need and returns the text of each root. */
  need(roots: readonly number[]): string[] {
    const g = this.ir.graph;
    for (const id of g.order(roots, this.done)) {
      const n = g.nodes[id];
      if (n.k !== 'op') continue;
      const line = `${this.o.lang === 'c' ? 'const double' : 'const'} fx_v${id} = ${opText(n.op, n.args.map(a => this.ref(a)), this.o.lang)};`;
      (g.invariant[id] ? this.text.hoisted : this.text.body).push(line);
    }
    return roots.map(r => this.ref(r));
  }

  offsetDecls(): string[] {
    const t = this.o.lang === 'c' ? 'const ptrdiff_t' : 'const';
    return [...this.text.offsets].map(([name, [dx, dy]]) => `${t} ${name} = ${intLiteral(dx)} + ${intLiteral(dy)} * fx_pw;`);
  }
}

/** Declares an integer loop variable in either language. */
const iv = (lang: LoopLang) => (lang === 'c' ? 'ptrdiff_t' : 'let');

/**
 * The initialiser of field `k` over the caller's unpadded row-major array `dst` (width × height):
 * returns statements that assume fx_W, fx_H, fx_dt and fx_p* in scope.
 */
export function initLoop(ir: ExportIR, k: number, dst: string, o: LoopOptions): string[] {
  const init = ir.fields[k].init;
  if (init === null) return [];
  const p = new KernelPrinter(ir, o, 'init');
  const [v] = p.need([init]);
  const I = iv(o.lang);
  return [
    '{',
    ...p.text.hoisted,
    `for (${I} fx_y = 0; fx_y < fx_H; fx_y++) {`,
    `for (${I} fx_x = 0; fx_x < fx_W; fx_x++) {`,
    ...p.text.body,
    `${dst}[fx_y * fx_W + fx_x] = ${v};`,
    '}',
    '}',
    '}',
  ];
}

/**
 * One step's lets and fused update, as statements inside the caller's step loop. Assumes in scope:
 * fx_W, fx_H, fx_pw, fx_hx, fx_hy (geometry), fx_t, fx_dt, fx_p*, buffers fx_c*, fx_d* (updated fields),
 * fx_l*, fx_tmp (blur scratch), taps fx_tap* with radii fx_rad* and let extents fx_ext*.
 */
export function stepBody(ir: ExportIR, o: LoopOptions): string[] {
  const out: string[] = [];
  const I = iv(o.lang);
  const two = ir.dims === 2;
  ir.lets.forEach((l, k) => {
    if (l.kind === 'blur') {
      const src = `${l.source.buf === 'field' ? 'fx_c' : 'fx_l'}${l.source.i}`;
      const xOut = two ? 'fx_tmp' : `fx_l${k}`;
      const acc = o.lang === 'c' ? 'double' : 'let';
      out.push(
        `{ /* let ${k}: separable Gaussian blur; the x pass also covers the rows the y pass reads */`,
        `const ${o.lang === 'c' ? 'ptrdiff_t ' : ''}fx_e = fx_ext${k}, fx_r = fx_rad${k}, fx_ey = ${two ? 'fx_e' : '0'}, fx_ry = ${two ? 'fx_r' : '0'}, fx_n = 2 * fx_r + 1;`,
        `for (${I} fx_y = -fx_ey - fx_ry; fx_y < fx_H + fx_ey + fx_ry; fx_y++) {`,
        `${I} fx_i = (fx_y + fx_hy) * fx_pw + fx_hx - fx_e;`,
        `for (${I} fx_x = -fx_e; fx_x < fx_W + fx_e; fx_x++, fx_i++) {`,
        `${acc} fx_s = 0;`,
        `for (${I} fx_k = 0, fx_j = fx_i - fx_r; fx_k < fx_n; fx_k++, fx_j++) fx_s += fx_tap${k}[fx_k] * ${src}[fx_j];`,
        `${xOut}[fx_i] = ${o.lang === 'c' ? `(${o.dtype === 'float32' ? 'float' : 'double'})` : ''}fx_s;`,
        '}',
        '}',
      );
      if (two) {
        out.push(
          `for (${I} fx_y = -fx_e; fx_y < fx_H + fx_e; fx_y++) {`,
          `${I} fx_i = (fx_y + fx_hy) * fx_pw + fx_hx - fx_e;`,
          `for (${I} fx_x = -fx_e; fx_x < fx_W + fx_e; fx_x++, fx_i++) {`,
          `${acc} fx_s = 0;`,
          `for (${I} fx_k = 0, fx_j = fx_i - fx_r * fx_pw; fx_k < fx_n; fx_k++, fx_j += fx_pw) fx_s += fx_tap${k}[fx_k] * fx_tmp[fx_j];`,
          `fx_l${k}[fx_i] = ${o.lang === 'c' ? `(${o.dtype === 'float32' ? 'float' : 'double'})` : ''}fx_s;`,
          '}',
          '}',
        );
      }
      out.push('}');
      return;
    }
    const p = new KernelPrinter(ir, o, 'kernel');
    const [v] = p.need([l.value]);
    out.push(
      `{ /* let ${k}, over the grid extended by its extent */`,
      `const ${o.lang === 'c' ? 'ptrdiff_t ' : ''}fx_e = fx_ext${k}, fx_ey = ${two ? 'fx_e' : '0'};`,
      ...p.offsetDecls(), ...p.text.hoisted,
      `for (${I} fx_y = -fx_ey; fx_y < fx_H + fx_ey; fx_y++) {`,
      `${I} fx_i = (fx_y + fx_hy) * fx_pw + fx_hx - fx_e;`,
      `for (${I} fx_x = -fx_e; fx_x < fx_W + fx_e; fx_x++, fx_i++) {`,
      ...p.text.body,
      `fx_l${k}[fx_i] = ${v};`,
      '}',
      '}',
      '}',
    );
  });

  // All updates fused into one pixel loop, in evaluation order.
  const p = new KernelPrinter(ir, o, 'kernel');
  const body: string[] = [];
  for (const u of ir.updates) {
    const before = p.text.body.length;
    const [v] = p.need([u.value]);
    body.push(...p.text.body.splice(before));
    body.push(`${o.lang === 'c' ? 'const double' : 'const'} fx_n${u.field} = ${v};`, `fx_d${u.field}[fx_i] = ${o.lang === 'c' ? `(${o.dtype === 'float32' ? 'float' : 'double'})` : ''}fx_n${u.field};`);
    p.stored.add(u.field);
  }
  out.push(
    '{ /* the updates, fused into one pixel loop */',
    ...p.offsetDecls(), ...p.text.hoisted,
    `for (${I} fx_y = 0; fx_y < fx_H; fx_y++) {`,
    `${I} fx_i = (fx_y + fx_hy) * fx_pw + fx_hx;`,
    `for (${I} fx_x = 0; fx_x < fx_W; fx_x++, fx_i++) {`,
    ...body,
    '}',
    '}',
    '}',
  );
  return out;
}

/** Indents brace-structured lines for readability (generated code is read by people). */
export function indent(lines: readonly string[], base = 0): string[] {
  let depth = base;
  const out: string[] = [];
  for (const raw of lines) {
    // Comment continuation lines keep their own layout.
    if (/^ \*/.test(raw)) {
      out.push(raw);
      continue;
    }
    const line = raw.trim();
    if (line === '') {
      out.push('');
      continue;
    }
    const opens = (line.match(/\{/g) ?? []).length, closes = (line.match(/\}/g) ?? []).length;
    const lead = line.startsWith('}') ? 1 : 0;
    out.push('  '.repeat(Math.max(0, depth - lead)) + line);
    depth += opens - closes;
  }
  return out;
}

/** Statements computing invariant values (blur widths) from fx_p* and fx_dt, with the text of each. */
export function scalarValues(ir: ExportIR, roots: readonly number[], o: LoopOptions): { lines: string[]; values: string[] } {
  const p = new KernelPrinter(ir, o, 'init');
  const values = p.need(roots);
  return { lines: [...p.text.hoisted, ...p.text.body], values };
}
