// The dual (sensitivity) kernels: no user text reaches generated code (as for the plain kernels, codegen.test.ts),
// a hostile-named scheme gives the same values and tangents, sensitivity mode leaves the values as the plain
// JavaScript kernels compute them, and bad names are refused with the available ones listed.
import { describe, expect, it } from 'vitest';
import { generateDualSource } from '../../../src/engine/dualCodegen';
import { jsBackend } from '../../../src/engine/jsBackend';
import { createRun } from '../../../src/engine/run';
import { expectClose, randomImage, schemeOf } from './util';

const BASE = `grid 2d
boundary reflect
param kk = 0.06 in [0.005, 0.5]
param ss = 1 in [0, 3]
step dt = 0.2
steps 5
field uu = image
field vv = 0.25 * kk
diffusivity gg(aa) = 1 / (1 + (aa / kk)^2)
fn ff(bb, cc) = bb / (1 + abs(cc))
let ww = blur(uu, ss)
let zz = max qq in N4: ww[qq] - ww
neighbours nn = {[1,0], [-1,0], [0,1], [0,-1]}
uu' = uu + dt * sum qq in nn: gg(ww[qq] - ww) * (uu[qq] - uu) + 0.01 * ff(zz, vv)
vv' = vv + 0.01 * (uu' - vv) * (if t > 0.3 then 1 else 0.5)
`;

const HOSTILE = ['constructor', '__proto__', 'process', '"); globalThis.__fluxelPwned = 1; ("', '*/ globalThis.__fluxelPwned = 1 /*', 'ü\u2028名前', 'toString', 'T', 'st', 'P'];

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

describe('dual kernels', () => {
  it('contain no user name, and a hostile-named scheme gives the same values and tangents', () => {
    const scheme = schemeOf(BASE);
    const userNames = ['kk', 'ss', 'uu', 'vv', 'gg', 'aa', 'ff', 'bb', 'cc', 'ww', 'zz', 'nn', 'qq'];
    const map = new Map(userNames.map((n, k) => [n, HOSTILE[k % HOSTILE.length] + (k >= HOSTILE.length ? `#${k}` : '')]));
    const hostile = rename(scheme, map);
    const wrt = [map.get('kk') as string, map.get('ss') as string, 'dt'];
    for (const dtype of ['float32', 'float64'] as const) {
      const src = generateDualSource(hostile, dtype, wrt).source;
      // 'T', 'st' and 'P' are also words of the generated code itself (the tangent context, the step, the params).
      for (const name of map.values()) if (!['T', 'st', 'P'].includes(name)) expect(src.includes(name), `dual ${dtype} code contains ${JSON.stringify(name)}`).toBe(false);
      expect(src).not.toMatch(/__fluxelPwned|process|constructor|__proto__|名前/);
    }
    const img = randomImage(20, 16, 3);
    // The monitors' static analysis is not under test here: switched off, it costs nothing.
    const quiet = { extremumCheck: false } as const;
    const a = createRun(scheme, { image: img, dtype: 'float64', sensitivity: ['kk', 'ss', 'dt'], monitors: quiet });
    const b = createRun(hostile, { image: img, dtype: 'float64', sensitivity: wrt, monitors: quiet });
    a.runSync();
    b.runSync();
    for (const k of [0, 1]) {
      expectClose(b.fieldData(k), a.fieldData(k), 0, `field ${k}`);
      ['kk', 'ss', 'dt'].forEach((n, j) => expectClose(b.sensitivityData(k, wrt[j]), a.sensitivityData(k, n), 0, `d field ${k}/d ${n}`));
    }
  });

  it('leave the values as the plain JavaScript kernels compute them (to rounding of a different operation order)', () => {
    const scheme = schemeOf(BASE);
    const img = randomImage(24, 20, 9);
    for (const dtype of ['float32', 'float64'] as const) {
      const plain = createRun(scheme, { image: img, dtype, backend: jsBackend, monitors: { extremumCheck: false } });
      const dual = createRun(scheme, { image: img, dtype, sensitivity: ['kk'], monitors: { extremumCheck: false } });
      plain.runSync();
      const r = dual.runSync();
      expect(r.backend).toBe('js-tangents');
      // Float64: the plain kernels multiply by a hoisted reciprocal where the dual ones divide (an ulp per step);
      // Float32: the same values, rounded to Float32 after every step.
      expectClose(dual.fieldData(0), plain.fieldData(0), dtype === 'float64' ? 1e-14 : 2e-7, `${dtype} values`);
    }
  });

  it('refuse unknown and repeated names, naming what is available', () => {
    const scheme = schemeOf(BASE);
    const monitors = { extremumCheck: false } as const;
    expect(() => createRun(scheme, { image: randomImage(8, 8, 1), sensitivity: ['K'], monitors })).toThrow("no parameter 'K' to differentiate by (parameters: kk, ss, dt)");
    expect(() => createRun(scheme, { image: randomImage(8, 8, 1), sensitivity: ['dt', 'dt'], monitors })).toThrow("'dt' is named twice");
    expect(() => createRun(scheme, { image: randomImage(8, 8, 1), sensitivity: ['kk'], monitors }).sensitivityData(0, 'ss')).toThrow("no sensitivity with respect to 'ss'");
  });
});
