// Generated-code safety and the kernel cache: no user text reaches generated code, numbers are re-printed,
// parameters arrive at run time (no recompilation), and compiled kernels are shared by signature.
import { describe, expect, it } from 'vitest';
import { generateSource, jsNumber } from '../../../src/engine/codegen';
import { JsBackend } from '../../../src/engine/jsBackend';
import { createRun } from '../../../src/engine/run';
import type { CheckedScheme } from '../../../src/notation/scheme';
import { expectClose, randomImage, schemeOf } from './util';

const BASE = `grid 2d
boundary reflect
param kk = 0.06 in [0.005, 0.5]
param ss = 1 in [0, 3]
step dt = 0.2
steps 5
field uu = image
field vv = 0.25
diffusivity gg(aa) = 1 / (1 + (aa / kk)^2)
fn ff(bb, cc) = bb / (1 + abs(cc))
let ww = blur(uu, ss)
let zz = ww[1,0] - ww
neighbours nn = {[1,0], [-1,0], [0,1], [0,-1]}
uu' = uu + dt * sum qq in nn: gg(ww[qq] - ww) * (uu[qq] - uu) + 0 * ff(zz, vv)
vv' = vv + 0.01 * (uu' - vv)
`;

/** Replaces every string equal to a key of `names` (values, Map keys), deep: the scheme as another parser might give it. */
function rename<T>(value: T, names: Map<string, string>): T {
  const walk = (v: unknown): unknown => {
    if (typeof v === 'string') return names.get(v) ?? v;
    if (Array.isArray(v)) return v.map(walk);
    if (v instanceof Map) return new Map([...v.entries()].map(([k, x]) => [walk(k), walk(x)]));
    if (v && typeof v === 'object') return Object.fromEntries(Object.entries(v).map(([k, x]) => [k, walk(x)]));
    return v;
  };
  return walk(value) as T;
}

const HOSTILE = [
  'constructor', '__proto__', 'process', 'globalThis.__fluxelPwned = 1', '"); globalThis.__fluxelPwned = 1; ("',
  '*/ globalThis.__fluxelPwned = 1 /*', 'x'.repeat(5000), 'ü\u2028名前', 'toString', 'Math', 'i', 'return',
];

describe('generated code', () => {
  it('contains no user name and runs identically when every name is hostile', () => {
    const scheme = schemeOf(BASE);
    const userNames = ['kk', 'ss', 'uu', 'vv', 'gg', 'aa', 'ff', 'bb', 'cc', 'ww', 'zz', 'nn', 'qq'];
    const map = new Map(userNames.map((n, k) => [n, HOSTILE[k % HOSTILE.length] + (k >= HOSTILE.length ? `#${k}` : '')]));
    const hostile = rename(scheme, map);
    expect(hostile.fields[0].name, 'renaming must reach field names').toBe(map.get('uu'));

    for (const dtype of ['float32', 'float64'] as const) {
      const src = generateSource(hostile, dtype).source;
      for (const name of map.values()) {
        // 'i', 'Math' and 'return' are also words of the generated code itself; every other name must never appear.
        if (!['i', 'Math', 'return'].includes(name)) expect(src.includes(name), `generated ${dtype} code contains the user name ${JSON.stringify(name.slice(0, 40))}`).toBe(false);
      }
      expect(src).not.toMatch(/__fluxelPwned|process|constructor|__proto__|名前/);
    }

    const img = randomImage(17, 13, 7);
    const a = createRun(scheme, { image: img, dtype: 'float64', backend: new JsBackend() });
    a.runSync();
    const b = createRun(hostile, { image: img, dtype: 'float64', backend: new JsBackend(), params: { [map.get('kk') as string]: 0.06 } });
    b.runSync();
    expect((globalThis as Record<string, unknown>).__fluxelPwned, 'hostile names executed code').toBeUndefined();
    expectClose(b.fieldData(0), a.fieldData(0), 0, 'hostile-named scheme vs plain scheme, field 0');
    expectClose(b.fieldData(1), a.fieldData(1), 0, 'hostile-named scheme vs plain scheme, field 1');
  });

  it('refuses a number literal that is not a number', () => {
    const scheme = schemeOf(BASE);
    const poisoned = JSON.parse(JSON.stringify(scheme.updates[1].expr)) as Record<string, unknown>;
    // vv' = vv + 0.01 * (...): put a string where the parsed value 0.01 sits.
    const evil = rename(scheme, new Map()) as CheckedScheme;
    const walk = (e: any): void => {
      if (e && typeof e === 'object') {
        if (e.kind === 'number' && e.value === 0.01) e.value = '0); globalThis.__fluxelPwned = 1; (0';
        for (const v of Object.values(e)) walk(v);
      }
    };
    walk(evil.updates);
    expect(poisoned).toBeTruthy();
    expect(() => generateSource(evil, 'float64')).toThrow(/not a number/);
    expect((globalThis as Record<string, unknown>).__fluxelPwned).toBeUndefined();
  });

  it('re-prints numbers from their values, including -0, NaN, infinities and exponents', () => {
    // Each printed literal must evaluate back to the same value (Object.is distinguishes -0 and NaN).
    for (const v of [0, -0, 1, -1, 0.1, 1e-7, 1.5e300, -2.5e-300, 5e-324, Number.MAX_VALUE, NaN, Infinity, -Infinity, 123456789012345680000]) {
      const text = jsNumber(v);
      expect(Object.is(new Function(`return ${text};`)(), v), `jsNumber(${v}) printed ${text}`).toBe(true);
    }
  });
});

describe('kernel cache', () => {
  it('compiles once per scheme and dtype; parameter, dt and steps changes reuse the kernels', () => {
    const backend = new JsBackend();
    const scheme = schemeOf(BASE);
    const img = randomImage(9, 8, 1);
    createRun(scheme, { image: img, backend }).runSync();
    createRun(scheme, { image: img, backend, params: { kk: 0.2, ss: 0.5 }, dt: 0.1, steps: 3 }).runSync();
    // A fresh parse of the same text has other source ranges but the same meaning.
    createRun(schemeOf(`# a comment moves every range\n${BASE}`), { image: img, backend }).runSync();
    expect(backend.compilations, 'same scheme, new params: no recompilation').toBe(1);
    createRun(scheme, { image: img, backend, dtype: 'float64' }).runSync();
    expect(backend.compilations, 'a new dtype compiles once more').toBe(2);
    createRun(schemeOf(BASE.replace('0.01 *', '0.02 *')), { image: img, backend }).runSync();
    expect(backend.compilations, 'a changed constant compiles anew').toBe(3);
  });

  it('parameter overrides change the result (params are read at run time)', () => {
    const scheme = schemeOf(BASE);
    const img = randomImage(9, 8, 2);
    const a = createRun(scheme, { image: img, dtype: 'float64' });
    a.runSync();
    const b = createRun(scheme, { image: img, dtype: 'float64', params: { kk: 0.3 } });
    b.runSync();
    let differs = false;
    const da = a.fieldData(0), db = b.fieldData(0);
    for (let i = 0; i < da.length; i++) if (da[i] !== db[i]) differs = true;
    expect(differs, 'K = 0.3 must give another result than K = 0.06').toBe(true);
    expect(() => createRun(scheme, { image: img, params: { nope: 1 } }), 'unknown parameter').toThrow(/unknown parameter/);
  });
});
