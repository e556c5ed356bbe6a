// fast-check generators of schemes for the notation campaign: grammar-shaped lines (every declaration kind, every
// operator of contracts.md §1, hostile names and numbers), whole schemes that often check clean, 200-line schemes,
// and the edits a user makes while typing (deleted, duplicated and inserted characters and tokens, cut-off lines).

import fc from 'fast-check';
import { CASES } from '../unit/notation/cases';

/** Names: plain ones the skeleton declares, near-misses, built-ins, words of the notation and hostile spellings. */
export const NAMES = ['u', 'v', 'w', 'K', 'lam', 'g', 'f', 'q', 'n', 'm', 'x', 'y', 't', 'h', 'dt', 'pi', 'abs', 'blur', 'len',
  'sum', 'N4', 'N8', 'N2', 'S', 'é', '名前', 'constructor', '__proto__', 'toString', 'prototype', 'u_1', 'x'.repeat(300)];

export const NUMBERS = ['0', '1', '2', '0.5', '0.25', '0.1', '1e-3', '3', '8', '9', '1.5', '1e308', '1e309', '1e-320', '4.9e-324',
  '123456789012345678901234567890', '0.000000000001', '00', '1e+5', '1E-2', '.5', '5.', 'NaN', 'Infinity', '0x10', '1_000'];

const name = fc.constantFrom(...NAMES);
const num = fc.oneof(
  { weight: 3, arbitrary: fc.constantFrom(...NUMBERS) },
  { weight: 1, arbitrary: fc.double({ noNaN: true, noDefaultInfinity: true, min: 0 }).map((d) => String(d)) },
  { weight: 1, arbitrary: fc.nat({ max: 12 }).map(String) },
);
const offsetComp = fc.oneof(fc.integer({ min: -9, max: 9 }).map(String), fc.constantFrom('n', '0.5', 'K', '-8', '8'));
const offset = fc.oneof(
  fc.tuple(offsetComp, offsetComp).map(([a, b]) => `[${a}, ${b}]`),
  offsetComp.map((a) => `[${a}]`),
  fc.constant('[n]'),
  fc.constant('[]'),
);

/** Expressions over the whole precedence table, depth-bounded. */
export const expr: fc.Arbitrary<string> = fc.letrec<{ e: string }>((tie) => ({
  e: fc.oneof(
    { depthSize: 'small', withCrossShrink: true },
    name,
    num,
    fc.tuple(name, offset).map(([a, o]) => `${a}${o}`),
    name.map((a) => `${a}'`),
    fc.tuple(tie('e'), fc.constantFrom('+', '-', '*', '/', '^', '<', '<=', '>', '>=', '==', '!=', 'and', 'or'), tie('e')).map(([a, op, b]) => `${a} ${op} ${b}`),
    fc.tuple(fc.constantFrom('-', '+', 'not '), tie('e')).map(([op, a]) => `${op}${a}`),
    tie('e').map((a) => `(${a})`),
    fc.tuple(tie('e'), tie('e'), tie('e')).map(([c, a, b]) => `if ${c} then ${a} else ${b}`),
    fc.tuple(fc.constantFrom('sum', 'max', 'min'), fc.constantFrom('N4', 'N8', 'N2', 'S', 'q'), tie('e')).map(([r, s, a]) => `${r} n in ${s}: ${a}`),
    fc.tuple(fc.constantFrom('abs', 'sqrt', 'exp', 'log', 'sin', 'cos', 'tanh', 'sign', 'g', 'f', 'len', 'u'), tie('e')).map(([f, a]) => `${f}(${a})`),
    fc.tuple(fc.constantFrom('min', 'max', 'f', 'blur'), tie('e'), tie('e')).map(([f, a, b]) => `${f}(${a}, ${b})`),
    fc.tuple(tie('e'), tie('e'), tie('e')).map(([a, b, c]) => `clamp(${a}, ${b}, ${c})`),
  ),
})).e;

/** Declarations of every kind, most of them well-formed, some not. */
export const line: fc.Arbitrary<string> = fc.oneof(
  fc.constantFrom('grid 2d', 'grid 1d', 'grid 3d', 'spacing 1', 'spacing 0', 'spacing 0.5', 'boundary reflect', 'boundary periodic',
    'boundary fixed 0', 'boundary fixed -1e308', 'boundary v periodic', 'boundary zz fixed 1', 'steps 5', 'steps 2.5', 'steps -1',
    'steps 1e15', 'until t = 1', 'until t = 0.35', 'until s = 1', 'step dt = 0.1', 'step dt = 0', 'step tau = 0.1', 'step dt = 1e-300',
    'field u = image', 'field v = 0', 'field w', 'neighbours S = {[1, 0], [-1, 0]}', 'neighbours S = {}', '# a comment with "quotes" and `ticks` ${x}',
    '', '   ', '\t'),
  fc.tuple(name, num, fc.option(fc.tuple(num, num))).map(([a, v, r]) => `param ${a} = ${v}${r ? ` in [${r[0]}, ${r[1]}]` : ''}`),
  fc.tuple(num, fc.option(fc.tuple(num, num))).map(([v, r]) => `step dt = ${v}${r ? ` in [${r[0]}, ${r[1]}]` : ''}`),
  fc.tuple(name, expr).map(([a, e]) => `field ${a} = ${e}`),
  fc.tuple(name, expr).map(([a, e]) => `let ${a} = ${e}`),
  fc.tuple(name, name, num).map(([a, b, s]) => `let ${a} = blur(${b}, ${s})`),
  fc.tuple(name, fc.array(name, { maxLength: 3 }), expr).map(([a, ps, e]) => `fn ${a}(${ps.join(', ')}) = ${e}`),
  fc.tuple(name, name, expr).map(([a, p, e]) => `diffusivity ${a}(${p}) = ${e}`),
  fc.tuple(name, fc.array(offset, { maxLength: 4 })).map(([a, os]) => `neighbours ${a} = {${os.join(', ')}}`),
  fc.tuple(name, expr).map(([a, e]) => `${a}' = ${e}`),
  fc.tuple(fc.constantFrom('u', 'v'), expr).map(([a, e]) => `${a}' = ${a} + dt * (${e})`),
  fc.tuple(expr, fc.string({ maxLength: 20 })).map(([e, c]) => `# ${e} ${c}`),
);

/** A skeleton that checks clean on its own, so that added lines are tried on schemes that reach analysis and compile. */
const skeleton: fc.Arbitrary<readonly string[]> = fc.constantFrom<readonly string[]>(
  ['grid 2d', 'step dt = 0.1', 'steps 3', 'field u = image', 'param K = 0.5 in [0, 1]'],
  ['grid 2d', 'boundary periodic', 'step dt = 0.2', 'steps 2', 'field u = image', 'field v = 0.5'],
  ['grid 1d', 'spacing 0.5', 'step dt = 0.01', 'until t = 0.03', 'field u = image'],
  ['grid 2d', 'boundary fixed 0', 'step dt = 0.05', 'steps 4', 'field u = 0.5 * exp(-((x - 3)^2 + (y - 3)^2))', 'field v = 1'],
);

const goodUpdate = fc.constantFrom(
  "u' = u + dt * sum n in N4: u[n] - u",
  "u' = u + dt * K * (u[1, 0] + u[-1, 0] - 2 * u)",
  "u' = u + dt * (u[1] - 2 * u + u[-1])",
  "v' = v + dt * (u' - v)",
  "u' = u - dt * max(0, u - u[-1, 0])",
  "u' = u + dt * sum n in N8: (u[n] - u) / len(n)",
);

export type Mutation = { at: number; op: 0 | 1 | 2 | 3 | 4; token: string };
const TOKENS = ['(', ')', '[', ']', '{', '}', ',', ':', '=', "'", '+', '-', '*', '/', '^', '<', '==', 'if', 'then', 'else', 'sum',
  'in', 'not', 'and', 'u', 'n', 'N4', 'blur', 'len', 'field', 'let', 'param', 'step', '\n', '#', '"', '`', '${', '\\u0041', '\u2028',
  '\r', '\r\n', '\uFEFF', '\uD800', '\u{1F600}', '@', '$', '\0', 'é'];
const mutation: fc.Arbitrary<Mutation> = fc.record({
  at: fc.double({ min: 0, max: 1, noNaN: true }),
  op: fc.constantFrom(0, 1, 2, 3, 4) as fc.Arbitrary<0 | 1 | 2 | 3 | 4>,
  token: fc.constantFrom(...TOKENS),
});

/** What typing does to a text: delete, duplicate, insert a token, cut off the rest of the line, swap neighbours. */
export function applyMutation(text: string, m: Mutation): string {
  const i = Math.min(text.length, Math.floor(m.at * (text.length + 1)));
  switch (m.op) {
    case 0: return text.slice(0, i) + text.slice(i + 1);
    case 1: return text.slice(0, i) + text.charAt(i) + text.slice(i);
    case 2: return text.slice(0, i) + m.token + text.slice(i);
    case 3: { const eol = text.indexOf('\n', i); return text.slice(0, i) + (eol < 0 ? '' : text.slice(eol)); }
    default: return i + 1 < text.length ? text.slice(0, i) + text[i + 1] + text[i] + text.slice(i + 2) : text;
  }
}

/** Expressions that check clean in every skeleton (u, K-free, dt and numbers), with hostile-sized numbers. */
export const validExpr: fc.Arbitrary<string> = fc.letrec<{ e: string }>((tie) => ({
  e: fc.oneof(
    { depthSize: 'small', withCrossShrink: true },
    fc.constantFrom('u', 'dt', 'w', 'x', 'y', 't', 'pi'),
    num.filter((s) => /^[0-9]+(\.[0-9]+)?(e[+-]?[0-9]+)?$/i.test(s)),
    fc.tuple(fc.integer({ min: -8, max: 8 }), fc.integer({ min: -8, max: 8 })).map(([a, b]) => `u[${a}, ${b}]`),
    fc.tuple(tie('e'), fc.constantFrom('+', '-', '*', '/', '^'), tie('e')).map(([a, op, b]) => `(${a} ${op} ${b})`),
    fc.tuple(fc.constantFrom('abs', 'sqrt', 'exp', 'log', 'tanh', 'sign'), tie('e')).map(([f, a]) => `${f}(${a})`),
    fc.tuple(fc.constantFrom('min', 'max'), tie('e'), tie('e')).map(([f, a, b]) => `${f}(${a}, ${b})`),
    fc.tuple(tie('e'), tie('e'), tie('e')).map(([c, a, b]) => `(if ${c} > 0 then ${a} else ${b})`),
    tie('e').filter((a) => !a.includes('sum')).map((a) => `(sum n in N4: ${a.replace(/u\[-?\d+, -?\d+\]/g, 'u[n]')})`),
  ),
})).e;

/** A 2d scheme that checks clean: a derived field and an update built from valid expressions. */
const validScheme: fc.Arbitrary<string> = fc
  .tuple(fc.constantFrom('reflect', 'periodic', 'fixed 0', 'fixed 1e308'), validExpr, validExpr, fc.constantFrom('0.1', '1e-300', '1e300', '0.25'), fc.constantFrom('0', '1', '3', '1000000'))
  .map(([b, w, e, dt, steps]) => ['grid 2d', `boundary ${b}`, `step dt = ${dt}`, `steps ${steps}`, 'field u = image', `let w = ${w.replace(/\bw\b/g, 'u')}`, `u' = u + dt * ${e}`].join('\n'));

/** A small scheme: a valid skeleton, random lines, a usual update, then 0–4 typing edits; or a valid scheme, perhaps edited. */
export const smallScheme: fc.Arbitrary<string> = fc.oneof(
  fc.tuple(skeleton, fc.array(line, { maxLength: 8 }), goodUpdate, fc.array(mutation, { maxLength: 4 }), fc.boolean())
    .map(([skel, extra, upd, muts, shuffle]) => {
      const lines: string[] = [...skel, ...extra, upd];
      if (shuffle) lines.reverse();
      return muts.reduce(applyMutation, lines.join('\n'));
    }),
  fc.tuple(validScheme, fc.array(mutation, { maxLength: 1 })).map(([s, muts]) => muts.reduce(applyMutation, s)),
  // The checker's own cases (one per diagnostic code), edited: every code stays within reach.
  fc.tuple(fc.constantFrom(...CASES.map((c) => c[1])), fc.array(mutation, { maxLength: 2 })).map(([s, muts]) => muts.reduce(applyMutation, s)),
);

/** A 200-line scheme: the skeleton, a chain of lets and functions, comments and random lines, updates, typing edits. */
export const longScheme: fc.Arbitrary<string> = fc
  .tuple(skeleton, fc.array(line, { minLength: 60, maxLength: 60 }), fc.array(expr, { minLength: 40, maxLength: 40 }), goodUpdate,
    fc.array(mutation, { maxLength: 3 }), fc.array(validExpr, { minLength: 60, maxLength: 60 }), fc.boolean())
  .map(([skel, random, exprs, upd, muts, valid, clean]) => {
    // Half the long files carry only valid lines (they reach analysis and compile), half random ones and edits.
    const extra = clean ? valid.map((e, k) => `let b${k} = ${e.replace(/\bw\b/g, 'u')}`) : random;
    if (clean) muts = [];
    if (clean && skel[0] === 'grid 1d') skel = ['grid 2d', 'step dt = 0.1', 'steps 3', 'field u = image'];
    const lines: string[] = [...skel];
    // A valid chain of lets (each reads the one before), so large files also reach analysis and compile.
    for (let k = 0; lines.length < 100; k++) lines.push(k === 0 ? 'let a0 = u[1, 0] - u' : `let a${k} = 0.5 * a${k - 1} + 0.25 * (u[0, 1] - u)`);
    for (const e of exprs) lines.push(`# ${e}`);
    lines.push(...extra);
    while (lines.length < 199) lines.push(`# padding ${lines.length}`);
    lines.push(upd);
    return muts.reduce(applyMutation, lines.join('\n'));
  });
