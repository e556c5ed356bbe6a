// Campaign "codegen-safety": schemes whose names, numbers and comments try to break out of the generated JavaScript
// (quotes, backticks, `${`, comment ends, line separators, __proto__, constructor, names of the generated code's own
// variables, unicode, very long names, huge and tiny numbers, NaN and Infinity spelled as names) go through the real
// parser and checker. Each is either rejected with a diagnostic, or compiles to source that passes a lexical audit
// (only generated identifiers, the kernel's own words and Math functions; no string, template, comment, backslash or
// `$`) and runs its kernels inside a vm context whose global object throws on every access but Math and Infinity.
// The sandbox idea: Node.js documentation, "vm (executing JavaScript)", vm.createContext with a Proxy as contextObject.

import fc from 'fast-check';
import vm from 'node:vm';
import { describe, expect, it } from 'vitest';
import { generateSource } from '../../src/engine/codegen';
import { createRun } from '../../src/engine/run';
import { EngineError } from '../../src/engine/plan';
import type { CompiledScheme, DType, Geometry, KernelBackend, KernelContext } from '../../src/engine/types';
import { parseAndCheck } from '../../src/notation';
import type { CheckedScheme } from '../../src/notation/scheme';
import { campaignSeed, rangeProblem, report, scaled } from './campaign';

/** Words the generated kernels use besides generated names (c0, v12, ...): keywords, geometry and context members. */
const WORDS = new Set(['use', 'strict', 'function', 'const', 'let', 'for', 'if', 'else', 'return', 'null', 'Infinity', 'NaN', 'Math',
  'g', 'ctx', 'e', 'i', 'x', 'y', 't', 'dt', 'W', 'H', 'pw', 'hx', 'hy', 'P', 'M', 'width', 'height', 'haloX', 'haloY', 'params', 'cur',
  'lets', 'next', 'monitor', 'min', 'max', 'bad', 'inits', 'update']);
const MATH = new Set(['abs', 'sqrt', 'exp', 'log', 'sin', 'cos', 'tanh', 'sign', 'min', 'max', 'pow', 'hypot', 'PI']);
const GENERATED = /^(c|l|p|v|d|n|o|mn|mx|init|let)[0-9]+$/;

/** Why the generated source is not plain arithmetic over generated names, or null when it is. */
function auditSource(source: string): string | null {
  const [first, ...rest] = source.split('\n');
  if (first !== '"use strict";') return `unexpected first line ${first}`;
  const body = rest.join('\n');
  const bad = /[^A-Za-z0-9_ \n+\-*/<>=!&|?:;,.(){}[\]]/.exec(body);
  if (bad) return `character ${JSON.stringify(bad[0])} at ${bad.index}`;
  if (/\/\/|\/\*/.test(body)) return 'a comment';
  for (const m of body.matchAll(/(\.?)\s*([A-Za-z_][A-Za-z0-9_]*)/g)) {
    const word = m[2];
    if (/^[0-9]/.test(word)) continue;
    const before = body.slice(Math.max(0, (m.index ?? 0) - 4), m.index ?? 0);
    if (m[1] === '.' && before.endsWith('Math')) {
      if (!MATH.has(word)) return `Math.${word}`;
    } else if (!WORDS.has(word) && !GENERATED.test(word)) return `identifier ${word}`;
  }
  // Exponents of number literals (1e-300) leave an 'e' glued to digits: the word scan above sees them as 'e'.
  return null;
}

/** The only global a kernel may read: the Math functions (as a frozen copy) and Infinity/NaN. */
function sandbox(): vm.Context {
  const math = Object.freeze(Object.fromEntries([...MATH].map((k) => [k, (Math as unknown as Record<string, unknown>)[k]])));
  const allowed: Record<string, unknown> = { Math: math, Infinity, NaN, undefined };
  const deny = (what: string) => (_t: object, k: string | symbol): never => { throw new Error(`generated code touched the global ${what} ${String(k)}`); };
  return vm.createContext(new Proxy({}, {
    get: (_t, k) => { if (typeof k === 'string' && k in allowed) return allowed[k]; return deny('read')(_t, k); },
    has: (_t, k) => { if (typeof k === 'string' && k in allowed) return true; return deny('lookup')(_t, k); },
    set: deny('write') as never,
    defineProperty: deny('definition') as never,
    deleteProperty: deny('deletion') as never,
    getOwnPropertyDescriptor: (_t, k) => (typeof k === 'string' && k in allowed ? { value: allowed[k], configurable: true, writable: false, enumerable: false } : deny('descriptor')(_t, k)),
  }));
}

type Kernels = { inits: (((g: Geometry, c: KernelContext) => void) | null)[]; lets: (((g: Geometry, c: KernelContext, e: number) => void) | null)[]; update(g: Geometry, c: KernelContext): void };

/** A backend that compiles the generated source inside the throwing sandbox instead of with `new Function`. */
class SandboxBackend implements KernelBackend {
  readonly name = 'sandbox';
  readonly context = sandbox();
  compile(scheme: CheckedScheme, opts: { dtype: DType }): CompiledScheme {
    const { source } = generateSource(scheme, opts.dtype);
    const k = vm.runInContext(`(function () {\n${source}\n})()`, this.context, { timeout: 5000 }) as Kernels;
    return {
      backend: 'sandbox', dtype: opts.dtype, signature: `sandbox-${opts.dtype}`,
      initField: (i, g, c) => (k.inits[i] as NonNullable<Kernels['inits'][number]>)(g, c),
      computeLet: (i, g, c, e) => (k.lets[i] as NonNullable<Kernels['lets'][number]>)(g, c, e),
      update: (g, c) => k.update(g, c),
    };
  }
}

/** Hostile spellings for names (those the lexer takes as identifiers become names; the rest must be diagnosed). */
const HOSTILE_NAMES = ['constructor', '__proto__', 'prototype', 'toString', 'valueOf', 'hasOwnProperty', 'eval', 'Function', 'globalThis',
  'process', 'require', 'import', 'this', 'arguments', 'ctx', 'g', 'P', 'M', 'W', 'H', 'i', 'pw', 'c0', 'v1', 'p0', 'l0', 'd0', 'n0', 'mn0',
  'Math', 'NaN', 'Infinity', 'undefined', 'null', 'return', 'use', 'strict', 'é', '名前', 'ǅx', 'x\u0301', 'a'.repeat(10000), '_', '__',
  '$x', 'a$', '"x', "x'", '`x`', '${x}', 'x\\u0041', '\\u0061', 'x\u2028y', 'x/*', '*/x', '<\/script>'];
const HOSTILE_NUMBERS = ['1e308', '1.7976931348623157e308', '1e309', '1e-323', '4.9e-324', '1e-400', '0.' + '0'.repeat(400) + '1',
  '9'.repeat(400), '123456789012345678901234567890', 'NaN', 'Infinity', '-0', '0e0', '1e+308', '.5', '5.', '0x1F', '1_0', '1e', '1e+'];
const HOSTILE_COMMENTS = ['# "); globalThis.pwned = 1; ("', '# `${globalThis.pwned = 1}`', '# */ globalThis.pwned = 1 /*',
  '# \u2028 globalThis.pwned = 1', '# \\u0022 \\x27', "# '; process.exit(1); '", '# </script><script>alert(1)</script>'];

/** A clean scheme with one spot filled in: a param name, a field name, a let name, a function name, or a number. */
function template(name: string, num: string, comment: string, where: number): string {
  const N = (k: number) => (where === k ? name : ['K', 'u', 'w', 'f', 'S'][k]);
  const [K, u, w, f, S] = [0, 1, 2, 3, 4].map(N);
  return [
    comment, 'grid 2d', 'boundary reflect', `param ${K} = 0.5 in [0, 1]`, 'step dt = 0.1', 'steps 2', comment,
    `field ${u} = image`, `fn ${f}(a) = a * ${num}`, `neighbours ${S} = {[1, 0], [-1, 0], [0, 1], [0, -1]}`,
    `let ${w} = ${u}[1, 0] - ${u}   ${comment}`,
    `${u}' = ${u} + dt * ${K} * (sum n in ${S}: ${u}[n] - ${u}) + 0 * ${f}(${w}) + 0 * ${num}`,
  ].join('\n');
}

describe('campaign codegen-safety', () => {
  it('the audit itself accepts the generated kernels of a clean scheme and flags smuggled code', () => {
    const src = generateSource(parseAndCheck(template('K', '2', '# c', 0)).scheme as CheckedScheme, 'float32').source;
    expect(auditSource(src)).toBeNull();
    expect(auditSource(src.replace('Math.min', 'Math.constructor'))).toMatch(/Math.constructor/);
    expect(auditSource(src + '\nglobalThis.x = 1;')).toMatch(/globalThis/);
    expect(auditSource(src + '\nconst s = "x";')).toMatch(/character/);
    expect(() => vm.runInContext('process.exit(1)', sandbox())).toThrow(/global read process/);
  });

  it('hostile names, numbers and comments are rejected with a diagnostic or compile to audited arithmetic that runs sandboxed', () => {
    const seed = campaignSeed(20261205);
    const tallies = { cases: 0, rejected: 0, compiled: 0, ran: 0 };
    const failures: string[] = [];
    const backend = new SandboxBackend();
    const image = { width: 5, height: 4, data: Float32Array.from({ length: 20 }, (_, k) => (k * 7) % 11 / 10) };
    const exercise = (text: string): void => {
      tallies.cases++;
      const fail = (what: string) => failures.push(`${what}: ${JSON.stringify(text.slice(0, 300))}`);
      const r = parseAndCheck(text);
      for (const d of r.diagnostics) { const p = rangeProblem(text, d); if (p) fail(`diagnostic ${d.code} ${p}`); }
      if (!r.scheme) {
        if (!r.diagnostics.some((d) => d.severity === 'error')) fail('no scheme and no error');
        tallies.rejected++;
        return;
      }
      for (const dtype of ['float32', 'float64'] as const) {
        let source: string;
        try { source = generateSource(r.scheme, dtype).source; } catch (e) {
          if (e instanceof EngineError) { tallies.rejected++; return; }
          fail(`codegen threw ${String(e)}`); return;
        }
        const problem = auditSource(source);
        if (problem) fail(`generated ${dtype} source: ${problem}`);
      }
      tallies.compiled++;
      try {
        const res = createRun(r.scheme, { image, backend, dtype: 'float64', steps: 2, every: 1 }).runSync();
        if (res.stepsDone > 0 || res.status !== 'done') tallies.ran++;
      } catch (e) {
        if (e instanceof EngineError) tallies.rejected++;
        else fail(`running in the sandbox threw ${String(e)}`);
      }
    };
    // Every hostile spelling in every slot, with each hostile comment; then generated combinations.
    for (const name of HOSTILE_NAMES) for (let where = 0; where < 5; where++) exercise(template(name, '2', HOSTILE_COMMENTS[where], where));
    for (const num of HOSTILE_NUMBERS) for (const c of HOSTILE_COMMENTS) exercise(template('K', num, c, 0));
    fc.assert(fc.property(
      fc.constantFrom(...HOSTILE_NAMES), fc.constantFrom(...HOSTILE_NUMBERS), fc.constantFrom(...HOSTILE_COMMENTS), fc.nat({ max: 4 }),
      fc.string({ unit: 'binary', maxLength: 12 }),
      (name, num, comment, where, junk) => { exercise(template(name + (junk.length % 3 === 0 ? '' : junk.replace(/[\s#]/g, '')), num, comment + junk, where)); },
    ), { numRuns: scaled(2000), seed });
    expect((globalThis as Record<string, unknown>).pwned).toBeUndefined();
    report('codegen-safety', tallies.cases, failures.length, `${tallies.rejected} rejected with a diagnostic or engine message, ${tallies.compiled} compiled and audited, ${tallies.ran} ran in the sandbox`);
    expect(failures.slice(0, 10)).toEqual([]);
    expect(tallies.ran).toBeGreaterThan(100);
  });
});
