// Constructs the examples do not use, exported to every target and compared with the engine (src/engine createRun):
// per-field boundaries (reflect, periodic, fixed), names that are keywords in the targets, user functions, if,
// comparisons and logic, max/min reductions over a declared set with a radius-2 offset, len, sign/sqrt/tanh/log,
// non-integer powers, a blur of a let and of a fixed-boundary field, lets reading lets at offsets, `t` and a primed
// read in updates, a field without an update; then `x` in an update (NumPy only) and a blur wider than the image.
// References: gcc, Debian's /usr/bin/python3 with numpy and dask (threads), Node; tolerances as numerics.md.
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { exportScheme } from '../../../src/export';
import { caseOf, cResult, differences, engineResult, jsResult, pythonResults, relError, type Case, type FieldValues } from './harness';

const dir = mkdtempSync(join(tmpdir(), 'fluxel-export-constructs-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const KITCHEN_SINK = `grid 2d
spacing 1
boundary reflect
boundary lambda periodic
boundary float fixed 0.25
param int = 0.5 in [0, 1]
param fx_k = 0.3 in [0, 1]
param sigma = 0.8 in [0, 3]
step dt = 0.1
steps 12

field u = image
field lambda = 0.2 + 0.1 * sin(x / 5) * cos(y / 7)
field float = clamp(x / 64, 0.1, 0.9)
field c0 = 0.5

neighbours D = {[1, 1], [-1, -1], [2, 0]}

fn f(a, b) = if a > b then a - b else (b - a) / 2
diffusivity g(s) = 1 / (1 + (s / int)^2)

let m = abs(u[1, 0] - u[-1, 0]) + max n in N4: u[n] - u
let w = blur(m, sigma)
let q = w[1, 0] - w[0, -1] + sign(m - 0.1) * sqrt(abs(m))
let b2 = blur(float, sigma / 2)

u' = u + dt * (sum n in N4: g(u[n] - u) * (u[n] - u)) + dt * fx_k * (min n in D: q[n]) * 0.1 + dt * 0.01 * f(u, lambda) + dt * 0.001 * (b2 - c0)
lambda' = lambda + dt * 0.2 * (sum n in N4: lambda[n] - lambda) + dt * 0.05 * (u' - lambda)^3 + dt * 0.01 * tanh(t) * exp(-u) * log(1 + lambda^2)
float' = float + dt * 0.2 * (sum n in N8: (float[n] - float) / len(n)^2) * (if (u > 0.5 and not (lambda < 0)) or u == 0 then 1 else 0.5) + dt * 0.01 * (abs(u - 0.3))^1.5
`;

/** x in an update: the NumPy export places it, the Dask export refuses it. */
const COORDINATES = `grid 2d
boundary periodic
step dt = 0.1
steps 5
field u = image
u' = u + dt * (sum n in N4: u[n] - u) + dt * 0.01 * sin(x / 3 + y / 5)
`;

/** A 1d blur of radius 12 on a 5-cell row, and a 2-d blur of radius 12 on a 5×3 image: reflection keeps folding. */
const WIDE_1D = `grid 1d
boundary reflect
param sigma = 3 in [0, 3]
step dt = 0.2
steps 3
field u = image
let w = blur(u, sigma)
u' = u + dt * (sum n in N2: u[n] - u) + dt * (w - u)
`;
const WIDE_2D = `grid 2d
boundary periodic
param sigma = 3 in [0, 3]
step dt = 0.2
steps 3
field u = image
let w = blur(u, sigma)
u' = u + dt * (sum n in N4: w[n] - u)
`;

function expectClose(got: FieldValues, want: FieldValues, tol: number, what: string): void {
  got.forEach((g, k) => {
    const { err, at } = relError(g, want[k]);
    expect(err, `${what}, field ${k}: relative difference ${err} at index ${at} (got ${g[at]}, engine ${want[k][at]}), tolerance ${tol}`).toBeLessThanOrEqual(tol);
  });
}

function allTargets(c: Case, tag: string, python: { numpy: FieldValues; dask: FieldValues } | null, tol: number): Promise<void> | void {
  const engine = engineResult(c);
  expectClose(cResult(c, join(dir, `c-${tag}`)), engine, tol, `${tag} C`);
  if (python) {
    expectClose(python.numpy, engine, tol, `${tag} NumPy`);
    python.dask.forEach((d, k) => expect(differences(d, python.numpy[k]).length, `${tag} field ${k}: Dask differs from NumPy`).toBe(0));
  }
  return jsResult(c, join(dir, `js-${tag}`)).then(js => expectClose(js, engine, tol, `${tag} JS`));
}

describe('constructs beyond the examples, every target vs the engine', () => {
  const sink32 = caseOf('kitchen-sink.fluxel', KITCHEN_SINK, 'float32');
  const sink64 = caseOf('kitchen-sink.fluxel', KITCHEN_SINK, 'float64');
  const wide1 = caseOf('wide-1d.fluxel', WIDE_1D, 'float64', Infinity, 5, 1);
  const wide2 = caseOf('wide-2d.fluxel', WIDE_2D, 'float64', Infinity, 5, 3);
  // 7×9 chunks: the kitchen sink's halo is 7 (q read at radius 2 ← w at 1 ← blur radius 3 ← m at 1), so blocks are no wider than it.
  let py: { numpy: FieldValues; dask: FieldValues }[] = [];
  beforeAll(() => {
    py = pythonResults([sink32, sink64, wide1, wide2], join(dir, 'py'), 'threads', [7, 9]);
  }, 900_000);

  it('kitchen sink, Float32 storage: C, JS, NumPy within 1e-5; Dask equals NumPy', () => allTargets(sink32, 'sink32', py[0], 1e-5));
  it('kitchen sink, Float64: within 1e-12', () => allTargets(sink64, 'sink64', py[1], 1e-12));
  it('a 1d blur wider than the row keeps folding (5 cells, radius 12)', () => allTargets(wide1, 'wide1', py[2], 1e-12));
  it('a periodic blur wider than the image keeps wrapping (5×3, radius 12); Dask falls back to one block', () => allTargets(wide2, 'wide2', py[3], 1e-12));

  it('x and y in an update export to C, JS and NumPy', async () => {
    const c = caseOf('coords.fluxel', COORDINATES, 'float64');
    const [p] = pythonResults([c], join(dir, 'py-coords-np'), 'threads', [17, 23], true);
    await allTargets(c, 'coords', { numpy: p.numpy, dask: p.numpy }, 1e-12);
  });

  it('x in an update does not export to Dask: the message names the construct and its line', () => {
    const c = caseOf('coords.fluxel', COORDINATES, 'float32');
    expect(() => exportScheme(c.scheme, 'dask', { fileName: 'coords.fluxel', sourceHash: '', stability: null, dtype: 'float32' }))
      .toThrow(/^line 6: `x` read in a let or update does not export to Dask/);
  });
});
