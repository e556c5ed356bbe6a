// The built-in functions and neighbour sets of the notation, in one table.
// The checker reads arities from here; the engine, analysis and exporters read the meaning.
// Pure: imports nothing from Node, the DOM or vscode.

import type { Offset } from './scheme';

export interface BuiltinFunction {
  readonly name: string;
  /** Accepted argument counts. */
  readonly arity: readonly number[];
  readonly doc: string;
}

/**
 * Plain numeric built-ins. `min`/`max` with two arguments are calls; followed by `n in S:` they are reductions.
 * `clamp(a, lo, hi)` limits a to [lo, hi]; `sign` is -1, 0 or 1.
 */
export const BUILTIN_FUNCTIONS: ReadonlyMap<string, BuiltinFunction> = new Map(
  ([
    ['abs', [1], 'absolute value'],
    ['sqrt', [1], 'square root'],
    ['exp', [1], 'e to the power a'],
    ['log', [1], 'natural logarithm'],
    ['sin', [1], 'sine (radians)'],
    ['cos', [1], 'cosine (radians)'],
    ['tanh', [1], 'hyperbolic tangent'],
    ['min', [2], 'smaller of two values'],
    ['max', [2], 'larger of two values'],
    ['clamp', [3], 'clamp(a, lo, hi): a limited to [lo, hi]'],
    ['sign', [1], 'sign of a: -1, 0 or 1'],
  ] as const).map(([name, arity, doc]) => [name, { name, arity, doc }]),
);

/** Special forms: `blur(field, sigma)` (only as the whole right-hand side of a `let`) and `len(n)` (n a reduction variable). */
export const SPECIAL_FORMS = ['blur', 'len'] as const;

/** Built-in neighbour sets. Offsets are [dx] in 1d and [dx, dy] in 2d; y grows downwards. */
export const BUILTIN_SETS: ReadonlyMap<string, { readonly dims: 1 | 2; readonly offsets: readonly Offset[] }> = new Map([
  ['N2', { dims: 1 as const, offsets: [[1], [-1]] }],
  ['N4', { dims: 2 as const, offsets: [[1, 0], [-1, 0], [0, 1], [0, -1]] }],
  ['N8', { dims: 2 as const, offsets: [[1, 0], [-1, 0], [0, 1], [0, -1], [1, 1], [-1, -1], [1, -1], [-1, 1]] }],
]);

/** The largest offset magnitude allowed in any component. */
export const MAX_OFFSET = 8;

/** Evaluates a plain built-in on numbers (used by constant folding in the checker and by reference evaluators). */
export function applyBuiltin(name: string, a: readonly number[]): number {
  switch (name) {
    case 'abs': return Math.abs(a[0]);
    case 'sqrt': return Math.sqrt(a[0]);
    case 'exp': return Math.exp(a[0]);
    case 'log': return Math.log(a[0]);
    case 'sin': return Math.sin(a[0]);
    case 'cos': return Math.cos(a[0]);
    case 'tanh': return Math.tanh(a[0]);
    case 'min': return Math.min(a[0], a[1]);
    case 'max': return Math.max(a[0], a[1]);
    case 'clamp': return Math.min(Math.max(a[0], a[1]), a[2]);
    case 'sign': return Math.sign(a[0]);
    default: throw new Error(`not a built-in function: ${name}`);
  }
}
